import { mkdtempSync, rmSync, statSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import proj4 from "proj4";
import * as shapefile from "shapefile";
import yauzl from "yauzl";
import { describe, expect, it } from "vitest";
import {
  DEFAULT_SEED,
  SAMPLES_DIR,
  generateLargeDataset,
  generateTown,
  mulberry32,
  noisyTrace,
  renderTownFiles,
  SHAPEFILE_SAMPLE,
  TOWN_SLUG,
  writeTownShapefile,
} from "../../../samples/generate";
import { GEOJSON_FILES, TRUTH_FILE, readSample } from "./helpers";

describe("sample generator determinism", () => {
  it("reproduces the committed sample files byte for byte", () => {
    const fresh = renderTownFiles();
    expect(Object.keys(fresh).sort()).toEqual([...GEOJSON_FILES, TRUTH_FILE].sort());
    for (const [name, text] of Object.entries(fresh)) {
      expect(text === readSample(name), `${name} differs from a fresh run of samples/generate.ts`).toBe(true);
    }
  });

  it("keeps every committed file under 1 MB", () => {
    for (const name of [...GEOJSON_FILES, TRUTH_FILE]) {
      expect(statSync(join(SAMPLES_DIR, name)).size, name).toBeLessThan(1_000_000);
    }
  });

  it("gives the same town for the same seed and different noise for another seed", () => {
    const a = generateTown({ seed: 99 });
    const b = generateTown({ seed: 99 });
    const c = generateTown({ seed: 100 });
    expect(b).toEqual(a);
    // The ground truth belongs to the town, not to the noise.
    expect(c.features.map((f) => f.truth)).toEqual(a.features.map((f) => f.truth));
    expect(c.features[0].trace.points).not.toEqual(a.features[0].trace.points);
    expect(a.seed).toBe(99);
    expect(generateTown().seed).toBe(DEFAULT_SEED);
  });

  it("draws mulberry32 uniforms in [0, 1) with mean 1/2 and variance 1/12", () => {
    // Moments of the uniform distribution on [0, 1): mean 1/2, variance 1/12 (common practice).
    const rand = mulberry32(1);
    const n = 200_000;
    let sum = 0;
    let sumSq = 0;
    let min = Infinity;
    let max = -Infinity;
    for (let i = 0; i < n; i++) {
      const u = rand();
      min = Math.min(min, u);
      max = Math.max(max, u);
      sum += u;
      sumSq += u * u;
    }
    expect(min).toBeGreaterThanOrEqual(0);
    expect(max).toBeLessThan(1);
    const mean = sum / n;
    expect(mean).toBeCloseTo(0.5, 2);
    expect(sumSq / n - mean * mean).toBeCloseTo(1 / 12, 3);
  });

  it("makes traces whose spacing follows the requested mean", () => {
    const town = generateTown({ sigma: 0 });
    const river = town.features.find((f) => f.kind === "river")!;
    const pts = river.trace.points;
    const dupes = new Set(river.trace.duplicates);
    const steps: number[] = [];
    for (let i = 1; i < pts.length - 1; i++) {
      if (!dupes.has(i)) steps.push(Math.hypot(pts[i][0] - pts[i - 1][0], pts[i][1] - pts[i - 1][1]));
    }
    const mean = steps.reduce((s, v) => s + v, 0) / steps.length;
    expect(mean).toBeGreaterThan(4.8);
    expect(mean).toBeLessThan(5.2);
    // Chords are a little shorter than arcs on the bends; steps stay within [0.4, 1.6] x 5 m.
    expect(Math.min(...steps)).toBeGreaterThan(1.9);
    expect(Math.max(...steps)).toBeLessThanOrEqual(8.0001);
  });

  it("rejects nonsense trace options with a clear error", () => {
    const curve = generateTown().features[0].truth;
    expect(() => noisyTrace(curve, { spacing: 0, sigma: 1, seed: 1 })).toThrow(/spacing must be > 0/);
    expect(() => noisyTrace(curve, { spacing: 5, sigma: -1, seed: 1 })).toThrow(/sigma must be >= 0/);
  });
});

describe("large datasets", () => {
  const countVertices = (fc: ReturnType<typeof generateLargeDataset>) =>
    fc.features.reduce(
      (n, f) => n + (f.geometry.type === "Polygon" ? f.geometry.coordinates[0].length : f.geometry.coordinates.length),
      0,
    );

  it("has exactly the requested number of vertices", () => {
    for (const n of [2, 3, 17, 4999, 60_001]) {
      const fc = generateLargeDataset(n, 5, { frame: "local" });
      expect(countVertices(fc), `vertexCount ${n}`).toBe(n);
      for (const f of fc.features) {
        const len = f.geometry.type === "Polygon" ? f.geometry.coordinates[0].length : f.geometry.coordinates.length;
        expect(len).toBeGreaterThanOrEqual(f.geometry.type === "Polygon" ? 4 : 2);
      }
    }
    expect(() => generateLargeDataset(1, 5)).toThrow(/vertexCount must be an integer >= 2/);
  });

  it("is deterministic and gives fresh noise to each tile", () => {
    const a = generateLargeDataset(40_000, 11, { frame: "local" });
    const b = generateLargeDataset(40_000, 11, { frame: "local" });
    expect(b).toEqual(a);
    const tiles = new Set(a.features.map((f) => f.properties!.tile));
    expect(tiles.size).toBeGreaterThan(1);
    // Same feature in two tiles: the offsets differ by the tile pitch, the noise must not repeat.
    const first = a.features.filter((f) => f.properties!.name === "High Street");
    const [p, q] = [first[0].geometry.coordinates[3] as number[], first[1].geometry.coordinates[3] as number[]];
    const dx = (q[0] - p[0]) % 8000;
    const dy = (q[1] - p[1]) % 8000;
    expect(Math.abs(dx) + Math.abs(dy)).toBeGreaterThan(1e-6);
  });
});

describe("the zipped Shapefile sample", () => {
  /** The archive's entries by extension, as buffers. */
  async function entries(path: string): Promise<Record<string, Buffer>> {
    const zip = await yauzl.openPromise(path, { lazyEntries: true });
    const out: Record<string, Buffer> = {};
    for await (const entry of zip.eachEntry()) {
      const chunks: Buffer[] = [];
      for await (const c of await zip.openReadStreamPromise(entry)) chunks.push(c as Buffer);
      out[entry.fileName.replace(/^.*\./, "")] = Buffer.concat(chunks);
    }
    zip.close();
    return out;
  }

  it("holds what a fresh run of the generator writes (read back with the shapefile package)", async () => {
    const dir = mkdtempSync(join(tmpdir(), "lissom-samples-"));
    try {
      const fresh = await entries(await writeTownShapefile(dir));
      const committed = await entries(join(SAMPLES_DIR, SHAPEFILE_SAMPLE));
      expect(Object.keys(committed).sort()).toEqual(["cpg", "dbf", "json", "prj", "shp", "shx"]);
      // Geometry and index files carry no date: byte for byte.
      expect(committed.shp!.equals(fresh.shp!)).toBe(true);
      expect(committed.shx!.equals(fresh.shx!)).toBe(true);
      expect(committed.prj!.toString()).toBe(fresh.prj!.toString());
      expect(committed.cpg!.toString()).toBe("UTF-8");
      // The .dbf header holds the day it was written (dBase III), so compare the records.
      const read = (e: Record<string, Buffer>) => shapefile.read(e.shp!, e.dbf!, { encoding: "utf-8" });
      const [a, b] = await Promise.all([read(committed), read(fresh)]);
      expect(a.features.map((f) => f.properties)).toEqual(b.features.map((f) => f.properties));
      expect(a.features.map((f) => f.properties!.name)).toContain("River Sallow");
      expect(statSync(join(SAMPLES_DIR, SHAPEFILE_SAMPLE)).size).toBeLessThan(1_000_000);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it("is the town's lines in UTM zone 26 N: proj4 maps it back onto the WGS 84 sample", async () => {
    const shp = await entries(join(SAMPLES_DIR, SHAPEFILE_SAMPLE));
    const lines = await shapefile.read(shp.shp!, shp.dbf!, { encoding: "utf-8" });
    const wgs = JSON.parse(readSample(`${TOWN_SLUG}-river.geojson`)) as { features: { geometry: { coordinates: number[][] } }[] };
    const river = lines.features.find((f) => f.properties!.name === "River Sallow")!;
    const back = proj4("+proj=utm +zone=26 +datum=WGS84 +units=m +no_defs", "WGS84");
    const projected = (river.geometry as { coordinates: number[][] }).coordinates;
    const original = wgs.features[0]!.geometry.coordinates;
    expect(projected.length).toBe(original.length);
    // Rounded to the millimetre in UTM and to 1e-7° in the GeoJSON: agree within 2e-7°.
    projected.forEach((p, i) => {
      const [lon, lat] = back.forward(p as [number, number]);
      expect(Math.abs(lon! - original[i]![0]!)).toBeLessThan(2e-7);
      expect(Math.abs(lat! - original[i]![1]!)).toBeLessThan(2e-7);
    });
  });
});

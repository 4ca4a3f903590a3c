import { readdirSync, readFileSync } from "node:fs";
import { check } from "@placemarkio/check-geojson";
import { afterAll, describe, expect, it } from "vitest";
import { readFeatures, writeOutput, type GeoJSONFeature } from "../../../app/formats";
import { collect, scratch } from "./helpers";

const s = scratch();
afterAll(() => s.cleanup());

async function* from<T>(items: T[]) {
  for (const x of items) yield x;
}

const features: GeoJSONFeature[] = [
  {
    type: "Feature",
    properties: { name: "Mill Lane", lanes: 2 },
    geometry: { type: "LineString", coordinates: [[-1.5, 52.1], [-1.499, 52.1005], [-1.498, 52.1]] },
    curves: [[[[-1.5, 52.1], [-1.4995, 52.1007], [-1.4985, 52.1007], [-1.498, 52.1]]]],
  },
  {
    type: "Feature",
    id: "weir",
    properties: null,
    geometry: { type: "MultiLineString", coordinates: [[[-1.4, 52.2], [-1.39, 52.21]], [[-1.38, 52.2], [-1.37, 52.2]]] },
    curves: [[[[-1.4, 52.2], [-1.39, 52.21]]], [[[-1.38, 52.2], [-1.37, 52.2]]]],
  },
];
const meta = { tolerance_m: 0.5, steps: [{ step: "fit", params: { tolerance: 0.5 } }], source: { dataset: "Ashby roads", version: 3, file: "roads.geojson" } };

describe("GeoJSON writing", () => {
  it("writes RFC 7946 GeoJSON with curves and metadata, and reads back the same features", async () => {
    const dest = s.path("out.geojson");
    const result = await writeOutput("geojson", from(features), dest, meta);
    expect(result).toMatchObject({ format: "geojson", files: [dest], features: 2, vertices: 7, segments: 3, mediaType: "application/geo+json" });
    const text = readFileSync(dest, "utf8");
    // An independent RFC 7946 checker (@placemarkio/check-geojson) accepts the file; it
    // throws on structural errors such as wrong nesting or missing members.
    expect(() => check(text)).not.toThrow();
    const doc = JSON.parse(text);
    // RFC 7946 §3.3: a FeatureCollection has a "features" array; §6.1: foreign members allowed.
    expect(doc.type).toBe("FeatureCollection");
    expect(doc.metadata).toMatchObject({ tolerance_m: 0.5, steps: meta.steps, source: meta.source, crs: "EPSG:4326" });
    expect(doc.metadata.caution).toMatch(/not for legal boundary definition/i);
    // RFC 7946 §3.2: every Feature has "geometry" and "properties" members.
    for (const f of doc.features) {
      expect(f).toHaveProperty("properties");
      expect(f).toHaveProperty("geometry");
    }
    // RFC 7946 §4: no "crs" member for WGS 84 output.
    expect(doc).not.toHaveProperty("crs");
    const back = await collect(readFeatures([{ path: dest, name: "out.geojson" }]));
    expect(back.map((b) => b.feature)).toEqual(features);
  });

  it("writes newline-delimited GeoJSON with a sidecar metadata file", async () => {
    const dest = s.path("out.ndjson");
    const result = await writeOutput("ndjson", from(features), dest, meta);
    expect(result.files).toEqual([dest, `${dest}.metadata.json`]);
    const lines = readFileSync(dest, "utf8").trimEnd().split("\n");
    expect(lines.map((l) => JSON.parse(l).properties)).toEqual([{ name: "Mill Lane", lanes: 2 }, null]);
    expect(JSON.parse(readFileSync(`${dest}.metadata.json`, "utf8"))).toMatchObject({ tolerance_m: 0.5, format: "ndjson" });
  });

  it("marks projected output with the legacy crs member", async () => {
    const dest = s.path("utm.geojson");
    await writeOutput("geojson", from([{ ...features[0]!, geometry: { type: "LineString", coordinates: [[500000, 5700000], [500010, 5700000]] }, curves: undefined }]), dest, { ...meta, crs: "EPSG:32630" });
    const doc = JSON.parse(readFileSync(dest, "utf8"));
    expect(doc.crs).toEqual({ type: "name", properties: { name: "urn:ogc:def:crs:EPSG::32630" } });
    expect(doc.metadata.notes[0]).toMatch(/not RFC 7946/);
  });

  it("leaves nothing behind when the feature stream fails half-way", async () => {
    const dir = scratch("lissom-atomic-");
    async function* failing() {
      yield features[0]!;
      throw new Error("step failed");
    }
    await expect(writeOutput("geojson", failing(), dir.path("half.geojson"), meta)).rejects.toThrow("step failed");
    await expect(writeOutput("ndjson", failing(), dir.path("half.ndjson"), meta)).rejects.toThrow("step failed");
    expect(readdirSync(dir.dir)).toEqual([]);
    dir.cleanup();
  });
});

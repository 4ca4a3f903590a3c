// Checks of the published GeoJSON against RFC 7946 (The GeoJSON Format, IETF, August 2016).
import { describe, expect, it } from "vitest";
import { ORIGIN, generateLargeDataset } from "../../../samples/generate";
import { GEOJSON_FILES, readSample, readTruth } from "./helpers";

type Pos = number[];
interface Geo {
  type: string;
  coordinates: unknown;
}
interface Feat {
  type: string;
  properties: Record<string, unknown> | null;
  geometry: Geo;
}

/** Twice the signed area of a ring by the shoelace formula; positive when counter-clockwise (common practice). */
function signedArea2(ring: Pos[]): number {
  let sum = 0;
  for (let i = 0; i + 1 < ring.length; i++) sum += ring[i][0] * ring[i + 1][1] - ring[i + 1][0] * ring[i][1];
  return sum;
}

function decimals(v: number): number {
  const s = String(v);
  const dot = s.indexOf(".");
  return dot < 0 ? 0 : s.length - dot - 1;
}

function checkPosition(p: Pos, where: string): void {
  // §3.1.1: a position is an array of two or more numbers, longitude then latitude (§4: WGS84).
  expect(Array.isArray(p) && p.length === 2, `${where}: position must be [lon, lat]`).toBe(true);
  const [lon, lat] = p;
  expect(Number.isFinite(lon) && Number.isFinite(lat), `${where}: finite numbers`).toBe(true);
  expect(lon >= -180 && lon <= 180, `${where}: longitude ${lon} in [-180, 180]`).toBe(true);
  expect(lat >= -90 && lat <= 90, `${where}: latitude ${lat} in [-90, 90]`).toBe(true);
  // Axis order: the invented town lies near 27.35° W, 47.85° N; swapped axes would put it elsewhere.
  expect(Math.abs(lon - ORIGIN.lon) < 0.2 && Math.abs(lat - ORIGIN.lat) < 0.2, `${where}: near the town`).toBe(true);
  // Rounded to 7 decimals (about 1 cm); §11.2 notes that 6 already give about 10 cm.
  expect(decimals(lon) <= 7 && decimals(lat) <= 7, `${where}: at most 7 decimals`).toBe(true);
}

function checkFeature(f: Feat, where: string): void {
  // §3.2: a Feature has "type": "Feature", a "geometry" member and a "properties" member.
  expect(f.type).toBe("Feature");
  expect(f.properties, `${where}: properties`).toBeTypeOf("object");
  const props = f.properties!;
  expect(typeof props.name, `${where}: name`).toBe("string");
  expect(["road", "river", "shore", "contour"], `${where}: kind`).toContain(props.kind);
  expect(props.noise_sigma_m, `${where}: noise_sigma_m`).toBeTypeOf("number");
  const g = f.geometry;
  if (g.type === "LineString") {
    // §3.1.4: the coordinates of a LineString are an array of two or more positions.
    const coords = g.coordinates as Pos[];
    expect(coords.length, `${where}: LineString length`).toBeGreaterThanOrEqual(2);
    coords.forEach((p, i) => checkPosition(p, `${where} vertex ${i}`));
  } else if (g.type === "Polygon") {
    // §3.1.6: a linear ring is closed, has four or more positions, and the first and last
    // positions are equivalent; exterior rings are counter-clockwise, holes clockwise.
    const rings = g.coordinates as Pos[][];
    expect(rings.length, `${where}: one exterior ring`).toBeGreaterThanOrEqual(1);
    rings.forEach((ring, r) => {
      expect(ring.length, `${where} ring ${r}: four or more positions`).toBeGreaterThanOrEqual(4);
      expect(ring[ring.length - 1], `${where} ring ${r}: closed`).toEqual(ring[0]);
      ring.forEach((p, i) => checkPosition(p, `${where} ring ${r} vertex ${i}`));
      const area = signedArea2(ring);
      if (r === 0) expect(area, `${where}: exterior ring counter-clockwise`).toBeGreaterThan(0);
      else expect(area, `${where}: hole clockwise`).toBeLessThan(0);
    });
  } else {
    throw new Error(`${where}: unexpected geometry type ${g.type}`);
  }
}

describe("sample GeoJSON follows RFC 7946", () => {
  for (const name of GEOJSON_FILES) {
    it(`${name} is a valid FeatureCollection`, () => {
      const fc = JSON.parse(readSample(name)) as { type: string; features: Feat[]; crs?: unknown; [k: string]: unknown };
      // §3.3: a FeatureCollection has "type": "FeatureCollection" and a "features" array.
      expect(fc.type).toBe("FeatureCollection");
      expect(Array.isArray(fc.features) && fc.features.length > 0).toBe(true);
      // §4: the "crs" member of the 2008 format is gone; coordinates are WGS84.
      expect(fc.crs).toBeUndefined();
      fc.features.forEach((f, i) => checkFeature(f, `${name} feature ${i}`));
    });
  }

  it("uses a Polygon for the lake shore and LineStrings for the rest", () => {
    const lake = JSON.parse(readSample("brindlewick-lake.geojson")) as { features: Feat[] };
    expect(lake.features.map((f) => f.geometry.type)).toEqual(["Polygon"]);
    const roads = JSON.parse(readSample("brindlewick-roads.geojson")) as { features: Feat[] };
    expect(new Set(roads.features.map((f) => f.geometry.type))).toEqual(new Set(["LineString"]));
  });

  it("puts every thematic feature into the combined linework file, in the truth file's order", () => {
    const linework = JSON.parse(readSample("brindlewick-linework.geojson")) as { features: Feat[] };
    const truth = readTruth();
    expect(linework.features.map((f) => f.properties!.name)).toEqual(truth.features.map((f) => f.name));
    for (const tf of truth.features) {
      const part = JSON.parse(readSample(tf.file)) as { features: Feat[] };
      const inPart = part.features.find((f) => f.properties!.name === tf.name);
      const inAll = linework.features.find((f) => f.properties!.name === tf.name);
      expect(inPart, `${tf.name} in ${tf.file}`).toBeDefined();
      expect(inAll).toEqual(inPart);
    }
  });

  it("keeps a large dataset in WGS84 within RFC 7946 ranges too", () => {
    const fc = generateLargeDataset(20_000, 3);
    for (const f of fc.features) {
      const rings = f.geometry.type === "Polygon" ? f.geometry.coordinates : [f.geometry.coordinates];
      for (const ring of rings) {
        for (const [lon, lat] of ring) {
          expect(lon >= -180 && lon <= 180 && lat >= -90 && lat <= 90).toBe(true);
        }
      }
      if (f.geometry.type === "Polygon") expect(signedArea2(f.geometry.coordinates[0])).toBeGreaterThan(0);
    }
  });
});

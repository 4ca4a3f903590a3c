import { readFileSync } from "node:fs";
import { join } from "node:path";
import * as shapefile from "shapefile";
import yauzl from "yauzl";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { DatasetInputError, inspectDataset, readFeatures, writeOutput, type GeoJSONFeature } from "../../../app/formats";
import { collect, scratch } from "./helpers";

const s = scratch();
afterAll(() => s.cleanup());

async function* from<T>(items: T[]) {
  for (const x of items) yield x;
}

/** Unpacks a zip with yauzl into the scratch folder; returns entry name -> path. */
async function unzip(path: string, into: string): Promise<Record<string, string>> {
  const { mkdirSync, writeFileSync } = await import("node:fs");
  mkdirSync(into, { recursive: true });
  const zip = await yauzl.openPromise(path, { lazyEntries: true });
  const out: Record<string, string> = {};
  for await (const entry of zip.eachEntry()) {
    const stream = await zip.openReadStreamPromise(entry);
    const chunks: Buffer[] = [];
    for await (const c of stream) chunks.push(c as Buffer);
    const p = join(into, entry.fileName);
    writeFileSync(p, Buffer.concat(chunks));
    out[entry.fileName] = p;
  }
  zip.close();
  return out;
}

const roads: GeoJSONFeature[] = [
  {
    type: "Feature",
    properties: { name: "Mill Lane", lanes: 2, width_m: 6.25, lit: true, surveyed: null, note: "Ünterführung — Brücke" },
    geometry: { type: "LineString", coordinates: [[451000.5, 205000.25, 12.5], [451010, 205003, 12.75], [451020.125, 205001, 13]] },
  },
  {
    type: "Feature",
    properties: { name: "Weir Road", lanes: 1, width_m: 4, lit: false, surveyed: "2021-05-04", note: null },
    geometry: { type: "MultiLineString", coordinates: [[[451100, 205100, 10], [451110, 205110, 10.5]], [[451120, 205100, 11], [451130, 205090, 11.5]]] },
  },
];

const parcels: GeoJSONFeature[] = [
  {
    type: "Feature",
    properties: { parcel_identifier_long_name: "A-17" },
    // RFC 7946 winding: exterior counter-clockwise, hole clockwise.
    geometry: {
      type: "Polygon",
      coordinates: [
        [[0, 0], [100, 0], [100, 100], [0, 100], [0, 0]],
        [[20, 20], [20, 40], [40, 40], [40, 20], [20, 20]],
      ],
    },
  },
];

describe("Shapefile writing, checked with the shapefile package", () => {
  let files: Record<string, string>;
  beforeAll(async () => {
    const dest = s.path("roads.zip");
    const r = await writeOutput("shapefile", from(roads), dest, { crs: "EPSG:27700", tolerance_m: 0.25, steps: [{ step: "discretise" }], source: { dataset: "Brindlewick roads" } });
    expect(r).toMatchObject({ features: 2, vertices: 7, files: [dest] });
    files = await unzip(dest, s.path("roads-unzipped"));
  });

  it("puts .shp, .shx, .dbf, .cpg, .prj and the metadata in the archive", () => {
    expect(Object.keys(files).sort()).toEqual(["roads.cpg", "roads.dbf", "roads.metadata.json", "roads.prj", "roads.shp", "roads.shx"]);
    expect(readFileSync(files["roads.cpg"]!, "utf8")).toBe("UTF-8");
    expect(readFileSync(files["roads.prj"]!, "utf8")).toMatch(/^PROJCS\["OSGB36 \/ British National Grid"/);
    const meta = JSON.parse(readFileSync(files["roads.metadata.json"]!, "utf8"));
    expect(meta).toMatchObject({ tolerance_m: 0.25, steps: [{ step: "discretise" }], source: { dataset: "Brindlewick roads" }, crs: "EPSG:27700" });
  });

  it("is read back by the shapefile package with the same geometry (x, y) and attributes", async () => {
    const collection = await shapefile.read(readFileSync(files["roads.shp"]!), readFileSync(files["roads.dbf"]!), { encoding: "utf-8" });
    expect(collection.features).toHaveLength(2);
    // The package reads x and y only (it drops Z); compare those.
    const xy = (c: number[][]) => c.map((p) => [p[0], p[1]]);
    expect(collection.features[0]!.geometry).toEqual({ type: "LineString", coordinates: xy(roads[0]!.geometry.coordinates as number[][]) });
    expect(collection.features[1]!.geometry).toEqual({ type: "MultiLineString", coordinates: (roads[1]!.geometry.coordinates as number[][][]).map(xy) });
    expect(collection.features[0]!.properties).toEqual({ name: "Mill Lane", lanes: 2, width_m: 6.25, lit: true, surveyed: null, note: "Ünterführung — Brücke" });
    expect(collection.features[1]!.properties).toMatchObject({ name: "Weir Road", lit: false, surveyed: "2021-05-04", note: null });
    // Header: PolyLineZ is shape type 13 (Technical Description, table 1); bbox covers all.
    expect(collection.bbox).toEqual([451000.5, 205000.25, 451130, 205110]);
    const shp = readFileSync(files["roads.shp"]!);
    expect(shp.readInt32LE(32)).toBe(13);
    expect(shp.readInt32BE(24) * 2).toBe(shp.length);
  });

  it("round-trips through our reader with Z kept and the CRS from the .prj", async () => {
    const dest = s.path("roads.zip");
    const items = await collect(readFeatures([{ path: dest, name: "roads.zip" }]));
    expect(items.map((i) => i.feature.geometry)).toEqual(roads.map((r) => r.geometry));
    const summary = await inspectDataset([{ path: dest, name: "roads.zip" }]);
    expect(summary).toMatchObject({ format: "shapefile", features: 2, crs: { code: "EPSG:27700", source: "prj" }, hasZ: true, encoding: "utf-8" });
    expect(summary.attributes).toMatchObject({ name: "string", lanes: "integer", width_m: "number", lit: "boolean" });
  });

  it("reads loose parts (.shp, .shx, .dbf, .prj, .cpg) the same as the zip", async () => {
    const loose = Object.entries(files)
      .filter(([n]) => !n.endsWith(".json"))
      .map(([name, path]) => ({ name, path }));
    const items = await collect(readFeatures(loose));
    expect(items.map((i) => i.feature.properties?.name)).toEqual(["Mill Lane", "Weir Road"]);
  });

  it("writes polygons with the Shapefile winding and reads them back with holes in place", async () => {
    const dest = s.path("parcels.zip");
    await writeOutput("shapefile", from(parcels), dest, { crs: "EPSG:32630" });
    const f = await unzip(dest, s.path("parcels-unzipped"));
    const collection = await shapefile.read(readFileSync(f["parcels.shp"]!), readFileSync(f["parcels.dbf"]!));
    const rings = (collection.features[0]!.geometry as { type: string; coordinates: number[][][] }).coordinates;
    expect(collection.features[0]!.geometry.type).toBe("Polygon");
    expect(rings).toHaveLength(2);
    // Technical Description: outer ring clockwise (negative shoelace area), hole counter-clockwise.
    const area = (r: number[][]) => r.reduce((a, p, i) => a + (r[(i + r.length - 1) % r.length]![0]! - p[0]!) * (r[(i + r.length - 1) % r.length]![1]! + p[1]!), 0) / 2;
    expect(area(rings[0]!)).toBeLessThan(0);
    expect(area(rings[1]!)).toBeGreaterThan(0);
    // A long name is cut to ten characters; the metadata maps it back.
    expect(Object.keys(collection.features[0]!.properties!)).toEqual(["parcel_ide"]);
    expect(JSON.parse(readFileSync(f["parcels.metadata.json"]!, "utf8")).dbfFieldNames).toEqual({ "parcels.dbf": { parcel_identifier_long_name: "parcel_ide" } });
  });

  it("fits attribute values to dBase fields: text cut between UTF-8 characters, numbers rounded, notes kept", async () => {
    const dest = s.path("long.zip");
    const line = (properties: Record<string, unknown>): GeoJSONFeature => ({ type: "Feature", properties, geometry: { type: "LineString", coordinates: [[0, 0], [10, 5]] } });
    // 200 two-byte characters: 400 bytes, over the 254-byte text field (dBase III limit, common practice).
    const r = await writeOutput("shapefile", from([line({ note: "é".repeat(200), ratio: 0.1 + 0.2, count: 12345678901234 }), line({ note: "short", ratio: 2.5, count: 7 })]), dest, { crs: "EPSG:32630" });
    expect(r.notes.some((n) => /1 text values were cut/.test(n))).toBe(true);
    const f = await unzip(dest, s.path("long-unzipped"));
    const collection = await shapefile.read(readFileSync(f["long.shp"]!), readFileSync(f["long.dbf"]!), { encoding: "utf-8" });
    const [first, second] = collection.features.map((x) => x.properties as Record<string, unknown>);
    expect(first!.note).toBe("é".repeat(127)); // 254 bytes, no half character
    expect(first!.ratio).toBeCloseTo(0.3, 15);
    expect(first!.count).toBe(12345678901234);
    expect(second).toEqual({ note: "short", ratio: 2.5, count: 7 });
  });

  it("puts lines and polygons of one dataset into two Shapefiles of the archive", async () => {
    const dest = s.path("town.zip");
    const lines = roads.map((r) => ({ ...r, geometry: { ...r.geometry, coordinates: r.geometry.type === "LineString" ? r.geometry.coordinates.map((p) => [p[0]! - 451000, p[1]! - 205000]) : r.geometry.coordinates } }));
    const r = await writeOutput("shapefile", from([lines[0]!, parcels[0]!]), dest, { crs: "EPSG:32630" });
    expect(r.notes.join(" ")).toMatch(/separate Shapefiles/);
    const f = await unzip(dest, s.path("town-unzipped"));
    expect(Object.keys(f).sort()).toEqual([
      "town.metadata.json",
      "town_areas.cpg", "town_areas.dbf", "town_areas.prj", "town_areas.shp", "town_areas.shx",
      "town_lines.cpg", "town_lines.dbf", "town_lines.prj", "town_lines.shp", "town_lines.shx",
    ]);
    const lineLayer = await shapefile.read(readFileSync(f["town_lines.shp"]!), readFileSync(f["town_lines.dbf"]!), { encoding: "utf-8" });
    const areaLayer = await shapefile.read(readFileSync(f["town_areas.shp"]!), readFileSync(f["town_areas.dbf"]!));
    expect(lineLayer.features.map((x) => x.properties?.name)).toEqual(["Mill Lane"]);
    expect(areaLayer.features[0]!.geometry.type).toBe("Polygon");
  });

  it("refuses a .dbf that is not UTF-8 when there is no .cpg, and reads it with one", async () => {
    const dir = s.path("latin1");
    const f = await unzip(s.path("roads.zip"), dir);
    // Rewrite the note of record 1 in Latin-1 bytes: 0xDC (Ü) is not valid UTF-8 on its own.
    const dbf = readFileSync(f["roads.dbf"]!);
    const utf8 = Buffer.from("Ünterführung", "utf8");
    const at = dbf.indexOf(utf8);
    expect(at).toBeGreaterThan(0);
    const latin1 = Buffer.from("Ünterführung", "latin1");
    const patched = Buffer.concat([dbf.subarray(0, at), latin1, Buffer.alloc(utf8.length - latin1.length, 0x20), dbf.subarray(at + utf8.length)]);
    const parts = (withCpg: string | null) => [
      s.file("latin1.shp", readFileSync(f["roads.shp"]!)),
      s.file("latin1.shx", readFileSync(f["roads.shx"]!)),
      s.file("latin1.dbf", patched),
      s.file("latin1.prj", readFileSync(f["roads.prj"]!)),
      ...(withCpg ? [s.file("latin1.cpg", withCpg)] : []),
    ];
    const error = await inspectDataset(parts(null)).catch((e) => e);
    expect(error).toBeInstanceOf(DatasetInputError);
    expect(error.message).toMatch(/^latin1\.dbf: feature 0: record 1, field note: the text is not valid utf-8 .*Add a \.cpg file/);
    const items = await collect(readFeatures(parts("1252")));
    expect(items[0]!.feature.properties?.note).toMatch(/^Ünterführung/);
  });
});

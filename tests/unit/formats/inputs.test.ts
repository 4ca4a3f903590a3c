import { readdirSync } from "node:fs";
import yazl from "yazl";
import { afterAll, describe, expect, it } from "vitest";
import { DatasetInputError, inspectDataset, readFeatures, writeOutput, type GeoJSONFeature, type OutputFormat } from "../../../app/formats";
import { collect, scratch } from "./helpers";

const s = scratch();
afterAll(() => s.cleanup());

async function zipOf(entries: { name: string; data: Buffer | string }[]): Promise<Buffer> {
  const zip = new yazl.ZipFile();
  for (const e of entries) zip.addBuffer(Buffer.from(e.data), e.name);
  zip.end();
  const chunks: Buffer[] = [];
  for await (const c of zip.outputStream) chunks.push(c as Buffer);
  return Buffer.concat(chunks);
}

const line = (i: number): GeoJSONFeature => ({
  type: "Feature",
  properties: { name: `Tanner Row ${i}` },
  geometry: { type: "LineString", coordinates: [[-1.5 + i * 0.01, 52.1], [-1.49 + i * 0.01, 52.11]] },
});

async function* from<T>(items: T[]) {
  for (const x of items) yield x;
}

describe("archives and file sets", () => {
  it("reads a zip holding GeoJSON, with folders and archiver clutter ignored", async () => {
    const zip = await zipOf([
      { name: "export/roads.geojson", data: JSON.stringify({ type: "FeatureCollection", features: [line(0), line(1)] }) },
      { name: "__MACOSX/export/._roads.geojson", data: "junk" },
      { name: "export/.DS_Store", data: "junk" },
    ]);
    const f = s.file("roads.zip", zip);
    const summary = await inspectDataset([f]);
    expect(summary).toMatchObject({ format: "geojson", features: 2 });
    const items = await collect(readFeatures([f]));
    expect(items.map((i) => i.feature.properties?.name)).toEqual(["Tanner Row 0", "Tanner Row 1"]);
  });

  it("removes its unpacked copy after reading", async () => {
    const { tmpdir } = await import("node:os");
    const before = readdirSync(tmpdir()).filter((n) => n.startsWith("lissom-unzip-")).length;
    const zip = await zipOf([{ name: "roads.geojson", data: JSON.stringify({ type: "FeatureCollection", features: [line(0)] }) }]);
    await inspectDataset([s.file("again.zip", zip)]);
    // Stop half-way through the stream: the copy goes too.
    for await (const _ of readFeatures([s.file("again.zip", zip)])) break;
    expect(readdirSync(tmpdir()).filter((n) => n.startsWith("lissom-unzip-")).length).toBe(before);
  });

  it("refuses loose Shapefile parts that do not share a name, and a mix of formats", async () => {
    const dir = scratch("lissom-parts-");
    const zipPath = dir.path("x.zip");
    await writeOutput("shapefile", from([line(0)]), zipPath, {});
    const { default: yauzl } = await import("yauzl");
    const z = await yauzl.openPromise(zipPath, { lazyEntries: true });
    const parts: { name: string; path: string }[] = [];
    for await (const entry of z.eachEntry()) {
      const chunks: Buffer[] = [];
      for await (const c of await z.openReadStreamPromise(entry)) chunks.push(c as Buffer);
      if (!entry.fileName.endsWith(".json")) parts.push(dir.file(entry.fileName.replace(/^x/, entry.fileName.endsWith(".dbf") ? "y" : "x"), Buffer.concat(chunks)));
    }
    z.close();
    const e = await inspectDataset(parts).catch((x) => x);
    expect(e).toBeInstanceOf(DatasetInputError);
    expect(e.message).toBe("y.dbf: its name does not match x.shp. The parts of one Shapefile share one name (roads.shp, roads.shx, roads.dbf); rename or remove the stray file.");
    const mixed = await inspectDataset([parts[0]!, s.file("extra.geojson", "{}")]).catch((x) => x);
    expect(mixed.message).toMatch(/^extra\.geojson: it was uploaded together with 1 other file\(s\); one upload is one dataset\./);
    dir.cleanup();
  });
});

describe("GeoJSON CRS choices", () => {
  it("notes when the crs option overrides the file's crs member", async () => {
    const fc = { type: "FeatureCollection", crs: { type: "name", properties: { name: "EPSG:32630" } }, features: [{ ...line(0), geometry: { type: "LineString", coordinates: [[500000, 5700000], [500010, 5700010]] } }] };
    const summary = await inspectDataset([s.file("override.geojson", JSON.stringify(fc))], { crs: "EPSG:32631" });
    expect(summary.crs).toMatchObject({ code: "EPSG:32631", source: "option", nonStandard: true });
    expect(summary.warnings[0]!.message).toBe('the file\'s "crs" member says EPSG:32630; the CRS given for the dataset (EPSG:32631) is used instead');
  });
});

describe("nothing half-written", () => {
  for (const [format, name] of [["shapefile", "x.zip"], ["gml", "x.gml"], ["svg", "x.svg"], ["csv", "x.csv"]] as [OutputFormat, string][]) {
    it(`${format}: a failing feature stream leaves no file behind`, async () => {
      const dir = scratch("lissom-half-");
      async function* failing() {
        yield line(0);
        yield line(1);
        throw new Error("step failed");
      }
      await expect(writeOutput(format, failing(), dir.path(name), {})).rejects.toThrow("step failed");
      expect(readdirSync(dir.dir)).toEqual([]);
      dir.cleanup();
    });
  }
});

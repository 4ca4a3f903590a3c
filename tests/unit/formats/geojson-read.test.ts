import { afterAll, describe, expect, it } from "vitest";
import { DatasetInputError, inspectDataset, readFeatures } from "../../../app/formats";
import { collect, scratch } from "./helpers";

const s = scratch();
afterAll(() => s.cleanup());

const line = (coords: number[][], properties: Record<string, unknown> | null = {}) => ({
  type: "Feature",
  properties,
  geometry: { type: "LineString", coordinates: coords },
});

async function refusal(name: string, content: string, options?: { crs?: string }): Promise<DatasetInputError> {
  const f = s.file(name, content);
  try {
    await inspectDataset([f], options);
  } catch (e) {
    if (e instanceof DatasetInputError) return e;
    throw e;
  }
  throw new Error(`${name} was accepted`);
}

describe("GeoJSON reading", () => {
  it("streams a FeatureCollection in input order with indexes and properties", async () => {
    const fc = {
      type: "FeatureCollection",
      features: [line([[-1.5, 52.1], [-1.49, 52.11]], { name: "Mill Lane" }), line([[-1.4, 52.2], [-1.39, 52.21], [-1.38, 52.2]], { name: "Weir Road" })],
    };
    // Whitespace and key order of RFC 8259 are free: type after features, pretty-printed.
    const text = JSON.stringify({ features: fc.features, type: fc.type }, null, 2);
    const f = s.file("roads.geojson", text);
    const items = await collect(readFeatures([f]));
    expect(items.map((i) => i.index)).toEqual([0, 1]);
    expect(items[1]!.feature.properties).toEqual({ name: "Weir Road" });
    expect(items[1]!.feature.geometry).toEqual(fc.features[1]!.geometry);
    const summary = await inspectDataset([f]);
    expect(summary).toMatchObject({
      format: "geojson",
      features: 2,
      parts: 2,
      vertices: 5,
      geometryTypes: { LineString: 2 },
      crs: { code: "EPSG:4326", source: "rfc7946" },
      bbox: [-1.5, 52.1, -1.38, 52.21],
      attributes: { name: "string" },
    });
  });

  it("reads features that straddle read chunks (a file of several MB)", async () => {
    const features = Array.from({ length: 3000 }, (_, i) =>
      line(
        Array.from({ length: 60 }, (_, j) => [10 + i * 1e-3 + j * 1e-5, 50 + j * 1e-5]),
        { id: i, label: `road "${i}" \\ ü ${"ß€🌉".repeat(i % 7)}`, escaped: "\u00e9\t\n\"", n: i % 3 ? -0.5e-3 : 12e2, flag: i % 2 === 0, none: null },
      ),
    );
    const text = JSON.stringify({ type: "FeatureCollection", features }, null, 1);
    const f = s.file("many.geojson", text);
    const items = await collect(readFeatures([f]));
    expect(items.length).toBe(3000);
    // Reference: V8's JSON.parse (RFC 8259) over the whole text; multi-byte characters fall across
    // the 1 MiB read chunks at arbitrary places, and every value must come out the same.
    const reference = (JSON.parse(text) as { features: typeof features }).features;
    for (let i = 0; i < items.length; i++) {
      expect(items[i]!.feature.properties).toEqual(reference[i]!.properties);
      expect(items[i]!.feature.geometry.coordinates).toEqual(reference[i]!.geometry.coordinates);
    }
  });

  it("ignores a byte order mark before the text (RFC 8259 §8.1)", async () => {
    const text = JSON.stringify({ type: "FeatureCollection", features: [line([[0, 0], [1, 1]], { k: 1 })] });
    const items = await collect(readFeatures([s.file("bom.geojson", Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from(text)]))]));
    expect(items.map((i) => i.feature.properties)).toEqual([{ k: 1 }]);
  });

  it("accepts a single Feature and a bare geometry", async () => {
    const a = await collect(readFeatures([s.file("one.geojson", JSON.stringify(line([[0, 0], [1, 1]], { k: 1 })))]));
    expect(a).toHaveLength(1);
    expect(a[0]!.feature.properties).toEqual({ k: 1 });
    const b = await collect(readFeatures([s.file("bare.json", JSON.stringify({ type: "MultiLineString", coordinates: [[[0, 0], [1, 1]], [[2, 2], [3, 2]]] }))]));
    expect(b[0]!.feature).toMatchObject({ type: "Feature", properties: null, geometry: { type: "MultiLineString" } });
  });

  it("carries Z through untouched", async () => {
    const f = s.file("z.geojson", JSON.stringify(line([[0, 0, 12.5], [1, 1, 13]])));
    const [item] = await collect(readFeatures([f]));
    expect(item!.feature.geometry.coordinates).toEqual([[0, 0, 12.5], [1, 1, 13]]);
    expect((await inspectDataset([f])).hasZ).toBe(true);
  });

  it("honours the legacy crs member and reports it as non-standard", async () => {
    const fc = {
      type: "FeatureCollection",
      crs: { type: "name", properties: { name: "urn:ogc:def:crs:EPSG::32630" } },
      features: [line([[500000, 5700000], [500100, 5700050]])],
    };
    const summary = await inspectDataset([s.file("utm.geojson", JSON.stringify(fc))]);
    expect(summary.crs).toMatchObject({ code: "EPSG:32630", source: "crs-member", nonStandard: true });
    expect(summary.warnings.some((w) => /RFC 7946 §4/.test(w.message))).toBe(true);
  });

  it("takes the CRS from the option for a projected file without one", async () => {
    const f = s.file("proj.geojson", JSON.stringify({ type: "FeatureCollection", features: [line([[500000, 5700000], [500100, 5700050]])] }));
    const summary = await inspectDataset([f], { crs: "EPSG:32630" });
    expect(summary.crs).toMatchObject({ code: "EPSG:32630", source: "option" });
  });

  it("skips and repairs malformed features inside a good file, each with a warning", async () => {
    const fc = {
      type: "FeatureCollection",
      features: [
        line([[0, 0], [1, 1]]),
        line([[0, 0]]),
        { type: "Feature", properties: {}, geometry: null },
      ],
    };
    const warnings: unknown[] = [];
    const items = await collect(readFeatures([s.file("mixed-quality.geojson", JSON.stringify(fc))], { onWarning: (w) => warnings.push(w) }));
    expect(items.map((i) => i.index)).toEqual([0]);
    expect(warnings).toEqual([
      expect.objectContaining({ feature: 1, action: "skipped", message: expect.stringContaining("only one vertex") }),
      expect.objectContaining({ feature: 2, action: "skipped", message: expect.stringContaining("no geometry") }),
    ]);
    const area = { type: "FeatureCollection", features: [{ type: "Feature", properties: {}, geometry: { type: "Polygon", coordinates: [[[0, 0], [1, 0], [1, 1]]] } }] };
    const [repaired] = await collect(readFeatures([s.file("open-ring.geojson", JSON.stringify(area))]));
    expect(repaired!.repaired).toMatch(/not closed/);
    // RFC 7946 §3.1.6: first and last positions of a ring are equivalent.
    expect(repaired!.feature.geometry.coordinates[0]).toEqual([[0, 0], [1, 0], [1, 1], [0, 0]]);
  });

  it("reads newline-delimited GeoJSON and RFC 8142 sequences", async () => {
    const a = line([[0, 0], [1, 1]], { n: 1 });
    const b = line([[2, 2], [3, 3]], { n: 2 });
    const nd = await collect(readFeatures([s.file("l.ndjson", `${JSON.stringify(a)}\n\n${JSON.stringify(b)}\r\n`)]));
    expect(nd.map((i) => i.feature.properties)).toEqual([{ n: 1 }, { n: 2 }]);
    // RFC 8142 §2.2: each text is RS, the JSON text, LF.
    const seqText = `\x1e${JSON.stringify(a)}\n\x1e${JSON.stringify(b)}\n`;
    const seq = await inspectDataset([s.file("s.geojsons", seqText)]);
    expect(seq).toMatchObject({ format: "geojsonseq", features: 2 });
    // RFC 8142 §2.4: a truncated last text is skipped, not fatal.
    const truncated = await inspectDataset([s.file("t.geojsons", `\x1e${JSON.stringify(a)}\n\x1e${JSON.stringify(b).slice(0, 30)}`)]);
    expect(truncated.features).toBe(1);
    expect(truncated.warnings[0]!.message).toMatch(/truncated/);
  });

  it("refuses with messages that name the file, the feature or byte, and what to do", async () => {
    const nanText = '{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"LineString","coordinates":[[1,2],[NaN,3]]}}]}';
    const nan = await refusal("nan.geojson", nanText);
    expect(nan.feature).toBe(0);
    // The streaming tokenizer reports no byte positions, so a syntax problem is located by feature (and line, below).
    expect(nan.offset).toBeUndefined();
    expect(nan.message).toMatch(/^nan\.geojson: feature 0: invalid JSON: 'NaN' is not a JSON number/);
    const pretty = await refusal("pretty.geojson", nanText.replace(/\{"type":"Feature"/g, '\n  {"type":"Feature"').replace('[NaN', '\n    [NaN'));
    expect(pretty.message).toMatch(/^pretty\.geojson: feature 0: line 3: invalid JSON: 'NaN' is not a JSON number/);

    const unquoted = await refusal("keys.geojson", '{"type":"FeatureCollection","features":[{type:"Feature"}]}');
    expect(unquoted.message).toMatch(/^keys\.geojson: feature 0: invalid JSON: an object key must be text in double quotes, found 't'/);

    const projected = await refusal("proj.geojson", JSON.stringify({ type: "FeatureCollection", features: [line([[1, 1], [2, 2]]), line([[512000, 6200000], [512010, 6200010]])] }));
    expect(projected.feature).toBe(1);
    expect(projected.message).toMatch(/outside WGS 84 longitude\/latitude range.*crs option/);

    const notGeo = await refusal("thing.geojson", '{"name": "not geojson", "items": [1, 2]}');
    expect(notGeo.message).toMatch(/^thing\.geojson: the JSON object has no "type" member, so it is not GeoJSON\. /);

    const points = await refusal("pts.geojson", JSON.stringify({ type: "FeatureCollection", features: [{ type: "Feature", properties: {}, geometry: { type: "Point", coordinates: [1, 2] } }] }));
    expect(points.message).toMatch(/feature 0: Point geometry/);

    const text = await refusal("notes.geojson", "road,name\n1,Mill Lane\n");
    expect(text.message).toMatch(/notes\.geojson: byte 0: the file is not JSON/);
  });
});

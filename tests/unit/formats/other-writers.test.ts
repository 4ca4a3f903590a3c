import { readFileSync } from "node:fs";
import { XMLParser, XMLValidator } from "fast-xml-parser";
import { parsePath } from "path-data-parser";
import { afterAll, describe, expect, it } from "vitest";
import { writeOutput, type GeoJSONFeature } from "../../../app/formats";
import { scratch } from "./helpers";

const s = scratch();
afterAll(() => s.cleanup());

async function* from<T>(items: T[]) {
  for (const x of items) yield x;
}

const meta = { tolerance_m: 0.5, steps: [{ step: "fit", params: { tolerance: 0.5 } }], source: { dataset: "Brindlewick rivers", version: 2 }, crs: "EPSG:27700" };

const river: GeoJSONFeature = {
  type: "Feature",
  properties: { name: "Brind & <Wick>", order: 3 },
  geometry: { type: "LineString", coordinates: [[451000, 205000], [451005, 205004], [451010, 205003], [451020, 205000]] },
  curves: [
    [
      [[451000, 205000], [451003, 205004], [451007, 205005], [451010, 205003]],
      [[451010, 205003], [451013, 205001], [451020, 205000]],
    ],
  ],
};
const pond: GeoJSONFeature = {
  type: "Feature",
  properties: { name: "Mill Pond" },
  geometry: { type: "MultiLineString", coordinates: [[[451100, 205100], [451110, 205100]], [[451120, 205100], [451130, 205105]]] },
  curves: [[[[451100, 205100], [451110, 205100]]], [[[451120, 205100], [451123, 205102], [451127, 205104], [451130, 205105]]]],
};

describe("GML 3.2 output, parsed back with fast-xml-parser", () => {
  it("is well-formed XML in the GML 3.2 namespace with gml:Curve and gml:Bezier segments", async () => {
    const dest = s.path("rivers.gml");
    const r = await writeOutput("gml", from([river, pond]), dest, meta);
    expect(r).toMatchObject({ features: 2, segments: 4, mediaType: "application/gml+xml; version=3.2" });
    const xml = readFileSync(dest, "utf8");
    expect(XMLValidator.validate(xml)).toBe(true);
    const doc = new XMLParser({ ignoreAttributes: false, attributeNamePrefix: "@", isArray: (name) => ["gml:featureMember", "gml:Bezier", "gml:LineStringSegment", "gml:knot", "gml:curveMember", "lissom:attribute"].includes(name) }).parse(xml);
    const fc = doc["gml:FeatureCollection"];
    // GML 3.2 (ISO 19136) namespace URI.
    expect(fc["@xmlns:gml"]).toBe("http://www.opengis.net/gml/3.2");
    expect(fc["gml:metaDataProperty"]["lissom:Metadata"]).toMatchObject({ "lissom:tolerance_m": 0.5, "lissom:crs": "EPSG:27700" });
    expect(String(fc["gml:description"])).toMatch(/Not for legal boundary definition/);
    const members = fc["gml:featureMember"];
    expect(members).toHaveLength(2);
    const f0 = members[0]["lissom:Feature"];
    expect(f0["lissom:attribute"][0]).toMatchObject({ "@name": "name", "#text": "Brind & <Wick>" });
    const curve = f0["lissom:geometry"]["gml:Curve"];
    expect(curve["@srsName"]).toBe("http://www.opengis.net/def/crs/EPSG/0/27700");
    const beziers = curve["gml:segments"]["gml:Bezier"];
    expect(beziers).toHaveLength(2);
    // Degree = control points − 1; a Bézier is a B-spline with two knots of multiplicity degree + 1.
    expect(beziers.map((b: Record<string, unknown>) => b["gml:degree"])).toEqual([3, 2]);
    for (const [i, b] of beziers.entries()) {
      const coords = String(b["gml:posList"]).split(" ").map(Number);
      expect(coords).toEqual(river.curves![0]![i]!.flat());
      expect(b["@interpolation"]).toBe("polynomialSpline");
      expect(b["gml:knot"].map((k: Record<string, Record<string, number>>) => [k["gml:Knot"]["gml:value"], k["gml:Knot"]["gml:multiplicity"]])).toEqual([
        [0, i === 0 ? 4 : 3],
        [1, i === 0 ? 4 : 3],
      ]);
    }
    const multi = members[1]["lissom:Feature"]["lissom:geometry"]["gml:MultiCurve"];
    expect(multi["gml:curveMember"]).toHaveLength(2);
    expect(multi["gml:curveMember"][0]["gml:Curve"]["gml:segments"]["gml:LineStringSegment"]).toHaveLength(1);
  });

  it("writes polygons as gml:Polygon with gml:Ring of curves", async () => {
    const square: GeoJSONFeature = {
      type: "Feature",
      properties: {},
      geometry: { type: "Polygon", coordinates: [[[0, 0], [10, 0], [10, 10], [0, 10], [0, 0]]] },
      curves: [[[[0, 0], [10, 0]], [[10, 0], [10, 10]], [[10, 10], [0, 10]], [[0, 10], [0, 0]]]],
    };
    const dest = s.path("square.gml");
    await writeOutput("gml", from([square]), dest, { crs: "EPSG:4326" });
    const doc = new XMLParser({ ignoreAttributes: false, attributeNamePrefix: "@" }).parse(readFileSync(dest, "utf8"));
    const polygon = doc["gml:FeatureCollection"]["gml:featureMember"]["lissom:Feature"]["lissom:geometry"]["gml:Polygon"];
    // WGS 84 longitude/latitude is named as OGC CRS84 (longitude first, like the coordinates).
    expect(polygon["@srsName"]).toBe("http://www.opengis.net/def/crs/OGC/1.3/CRS84");
    expect(polygon["gml:exterior"]["gml:Ring"]["gml:curveMember"]["gml:Curve"]["gml:segments"]["gml:LineStringSegment"]).toHaveLength(4);
  });
});

describe("SVG output, parsed back with path-data-parser", () => {
  it("draws cubics with C, keeps control points, flips y and sets the viewBox from the bounding box", async () => {
    const dest = s.path("rivers.svg");
    await writeOutput("svg", from([{ ...river, inputGeometry: river.geometry }, pond]), dest, meta);
    const svg = readFileSync(dest, "utf8");
    expect(XMLValidator.validate(svg)).toBe(true);
    const doc = new XMLParser({ ignoreAttributes: false, attributeNamePrefix: "@", isArray: (n) => n === "path" || n === "g" }).parse(svg);
    const root = doc.svg;
    const [ox, oy] = String(root["@data-origin"]).split(" ").map(Number);
    const layers = Object.fromEntries(root.g.map((g: Record<string, unknown>) => [g["@id"], g]));
    expect(Object.keys(layers)).toEqual(["input", "output"]);
    const paths = (layers.output as { path: Record<string, string>[] }).path;
    const segs = parsePath(paths[0]!["@d"]!);
    expect(segs.map((x) => x.key)).toEqual(["M", "C", "Q"]);
    // Map back: x = u + x0, y = y0 − v (SVG's y axis points down).
    const back = (data: number[]) => {
      const out: number[][] = [];
      for (let i = 0; i < data.length; i += 2) out.push([data[i]! + ox!, oy! - data[i + 1]!]);
      return out;
    };
    expect(back(segs[0]!.data)).toEqual([river.curves![0]![0]![0]]);
    expect(back(segs[1]!.data)).toEqual(river.curves![0]![0]!.slice(1));
    expect(back(segs[2]!.data)).toEqual(river.curves![0]![1]!.slice(1));
    // The viewBox contains every point drawn.
    const [vx, vy, vw, vh] = String(root["@viewBox"]).split(" ").map(Number);
    for (const p of paths) {
      const data = parsePath(p["@d"]!).flatMap((x) => x.data);
      for (let i = 0; i < data.length; i += 2) {
        expect(data[i]!).toBeGreaterThanOrEqual(vx!);
        expect(data[i]!).toBeLessThanOrEqual(vx! + vw!);
        expect(data[i + 1]!).toBeGreaterThanOrEqual(vy!);
        expect(data[i + 1]!).toBeLessThanOrEqual(vy! + vh!);
      }
    }
    expect((layers.input as { path: unknown[] }).path).toHaveLength(1);
    expect(String(root.metadata["#text"] ?? root.metadata)).toContain("tolerance_m");
  });
});

describe("CSV of control points", () => {
  it("lists feature, part, segment, point, x, y per control point (RFC 4180 lines)", async () => {
    const dest = s.path("rivers.csv");
    const r = await writeOutput("csv", from([river, pond]), dest, meta);
    expect(r.files).toEqual([dest, `${dest}.metadata.json`]);
    const text = readFileSync(dest, "utf8");
    const lines = text.split("\r\n");
    expect(lines[0]).toBe("feature,part,segment,point,x,y");
    expect(lines[1]).toBe("0,0,0,0,451000,205000");
    expect(lines[4]).toBe("0,0,0,3,451010,205003");
    expect(lines[5]).toBe("0,0,1,0,451010,205003");
    // 4 + 3 control points for the river, 2 + 4 for the pond, a header and a trailing empty line.
    expect(lines).toHaveLength(1 + 7 + 6 + 1);
    expect(lines.at(-2)).toBe("1,1,0,3,451130,205105");
    expect(JSON.parse(readFileSync(`${dest}.metadata.json`, "utf8"))).toMatchObject({ tolerance_m: 0.5, format: "csv" });
  });
});

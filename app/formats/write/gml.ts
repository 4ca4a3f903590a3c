import { normaliseCrsCode } from "../crs";
import type { CurveSegment, GeoJSONFeature, Position } from "../types";
import { asFeature, partIsRing, partsOf, segmentCount, vertexCount } from "./features";
import { FileSink } from "./file-sink";
import { metadataDocument, type OutputMeta, type WriteResult } from "./meta";

export const GML_NS = "http://www.opengis.net/gml/3.2";
/** The namespace of Lissom's feature and metadata elements in GML output. */
export const LISSOM_NS = "urn:x-lissom:output:1";

/**
 * The srsName of a CRS. WGS 84 longitude/latitude is named as OGC CRS84, whose axis order is
 * longitude, latitude like our coordinates (EPSG:4326 itself is latitude first); other EPSG
 * codes use the OGC http URI form (OGC 09-048r5, from memory).
 */
export function srsNameFor(code: string): string {
  const c = normaliseCrsCode(code);
  if (c === "EPSG:4326") return "http://www.opengis.net/def/crs/OGC/1.3/CRS84";
  const m = /^EPSG:(\d+)$/.exec(c);
  return m ? `http://www.opengis.net/def/crs/EPSG/0/${m[1]}` : c;
}

export function xmlEscape(s: string): string {
  return s.replace(/[<>&"']/g, (c) => ({ "<": "&lt;", ">": "&gt;", "&": "&amp;", '"': "&quot;", "'": "&apos;" })[c]!);
}

/** Text for XML, without characters XML 1.0 forbids (most C0 controls). */
function xmlText(s: string): string {
  // eslint-disable-next-line no-control-regex
  return xmlEscape(s.replace(/[\u0000-\u0008\u000B\u000C\u000E-\u001F\uFFFE\uFFFF]/g, ""));
}

/**
 * GML 3.2 (ISO 19136, namespace http://www.opengis.net/gml/3.2) output. The document is a
 * `gml:FeatureCollection` of `gml:featureMember`s, each a `lissom:Feature` with its attributes
 * and one geometry:
 *
 * - lines: `gml:Curve` (several parts: `gml:MultiCurve` of `gml:curveMember`s) whose
 *   `gml:segments` hold one `gml:Bezier` per curve segment: `gml:posList` of its control
 *   points, `gml:degree` (control points − 1) and the two `gml:knot`s of a Bézier as a
 *   B-spline (values 0 and 1, multiplicity degree + 1, weight 1); straight segments (degree 1)
 *   are `gml:LineStringSegment`s;
 * - areas: `gml:Polygon` (`gml:MultiSurface` for several) whose rings are `gml:Ring`s of one
 *   such `gml:Curve`.
 *
 * Features without `curves` get their polyline as `gml:LineStringSegment`s. The CRS is the
 * `srsName` of every geometry, with `srsDimension`. The metadata (tolerance, steps, source,
 * caution) sits in the collection's `gml:metaDataProperty` as a `lissom:Metadata` element, and
 * the caution also in `gml:description`.
 */
export async function writeGml(features: AsyncIterable<object>, path: string, meta: OutputMeta): Promise<Omit<WriteResult, "files" | "format" | "mediaType">> {
  const sink = await FileSink.create(path);
  const srsName = srsNameFor(meta.crs ?? "EPSG:4326");
  const doc = metadataDocument(meta, "gml");
  let count = 0;
  let vertices = 0;
  let segments = 0;
  try {
    await sink.write(
      `<?xml version="1.0" encoding="UTF-8"?>\n` +
        `<gml:FeatureCollection xmlns:gml="${GML_NS}" xmlns:lissom="${LISSOM_NS}" gml:id="lissom-output">\n` +
        `<gml:metaDataProperty><lissom:Metadata>${metadataElements(doc)}</lissom:Metadata></gml:metaDataProperty>\n` +
        `<gml:description>${xmlText(String(doc.caution))}</gml:description>\n`,
    );
    for await (const value of features) {
      const f = asFeature(value, count);
      const id = `f${count}`;
      let xml = `<gml:featureMember><lissom:Feature gml:id="${id}">`;
      if (f.id !== undefined) xml += `<lissom:featureId>${xmlText(String(f.id))}</lissom:featureId>`;
      xml += attributes(f.properties);
      xml += `<lissom:geometry>${geometryXml(f, id, srsName)}</lissom:geometry>`;
      xml += `</lissom:Feature></gml:featureMember>\n`;
      await sink.write(xml);
      count++;
      vertices += vertexCount(f.geometry);
      segments += segmentCount(f.curves);
    }
    await sink.write(`</gml:FeatureCollection>\n`);
    await sink.close();
  } catch (error) {
    await sink.abandon();
    throw error;
  }
  return { features: count, vertices, segments, bytes: sink.bytes, notes: [] };
}

function metadataElements(doc: Record<string, unknown>): string {
  let out = "";
  for (const [key, value] of Object.entries(doc)) {
    const name = key.replace(/[^A-Za-z0-9_.-]/g, "_").replace(/^([^A-Za-z_])/, "_$1");
    const text = typeof value === "string" ? value : JSON.stringify(value);
    out += `<lissom:${name}>${xmlText(text ?? "")}</lissom:${name}>`;
  }
  return out;
}

function attributes(props: Record<string, unknown> | null): string {
  if (!props) return "";
  let out = "";
  for (const [name, value] of Object.entries(props)) {
    const type = value === null ? "null" : Array.isArray(value) ? "array" : typeof value;
    const text = value === null || value === undefined ? "" : typeof value === "object" ? JSON.stringify(value) : String(value);
    out += `<lissom:attribute name="${xmlEscape(name)}" type="${type}">${xmlText(text)}</lissom:attribute>`;
  }
  return out;
}

function posList(points: Position[], dim: number): string {
  let s = "";
  for (let i = 0; i < points.length; i++) {
    const p = points[i]!;
    if (i) s += " ";
    s += dim === 3 ? `${p[0]} ${p[1]} ${p[2] ?? 0}` : `${p[0]} ${p[1]}`;
  }
  return s;
}

function segmentXml(seg: CurveSegment, dim: number): string {
  const degree = seg.length - 1;
  if (degree === 1) return `<gml:LineStringSegment interpolation="linear"><gml:posList>${posList(seg, dim)}</gml:posList></gml:LineStringSegment>`;
  const knot = (v: number) => `<gml:knot><gml:Knot><gml:value>${v}</gml:value><gml:multiplicity>${degree + 1}</gml:multiplicity><gml:weight>1</gml:weight></gml:Knot></gml:knot>`;
  return `<gml:Bezier interpolation="polynomialSpline"><gml:posList>${posList(seg, dim)}</gml:posList><gml:degree>${degree}</gml:degree>${knot(0)}${knot(1)}</gml:Bezier>`;
}

function curveXml(id: string, srs: string, dim: number, part: Position[], curve: CurveSegment[] | undefined): string {
  let segs = "";
  if (curve && curve.length) for (const seg of curve) segs += segmentXml(seg, dim);
  else segs = `<gml:LineStringSegment interpolation="linear"><gml:posList>${posList(part, dim)}</gml:posList></gml:LineStringSegment>`;
  return `<gml:Curve gml:id="${id}" srsName="${xmlEscape(srs)}" srsDimension="${dim}"><gml:segments>${segs}</gml:segments></gml:Curve>`;
}

function geometryXml(f: GeoJSONFeature, id: string, srs: string): string {
  const g = f.geometry;
  const parts = partsOf(g);
  const dim = parts.some((p) => p.some((q) => q.length > 2)) ? 3 : 2;
  const curves = Array.isArray(f.curves) ? f.curves : undefined;
  const attrs = `srsName="${xmlEscape(srs)}" srsDimension="${dim}"`;
  if (!partIsRing(g)) {
    if (parts.length === 1) return curveXml(`${id}.c0`, srs, dim, parts[0]!, curves?.[0]);
    return `<gml:MultiCurve gml:id="${id}.g" ${attrs}>${parts.map((p, k) => `<gml:curveMember>${curveXml(`${id}.c${k}`, srs, dim, p, curves?.[k])}</gml:curveMember>`).join("")}</gml:MultiCurve>`;
  }
  const polygons = g.type === "Polygon" ? [g.coordinates] : (g.coordinates as Position[][][]);
  let k = 0;
  const polygonXml = (rings: Position[][], pi: number) => {
    const ringXml = rings.map((ring) => {
      const xml = `<gml:Ring><gml:curveMember>${curveXml(`${id}.c${k}`, srs, dim, ring, curves?.[k])}</gml:curveMember></gml:Ring>`;
      k++;
      return xml;
    });
    return `<gml:Polygon gml:id="${id}.p${pi}" ${attrs}><gml:exterior>${ringXml[0]}</gml:exterior>${ringXml
      .slice(1)
      .map((r) => `<gml:interior>${r}</gml:interior>`)
      .join("")}</gml:Polygon>`;
  };
  if (polygons.length === 1) return polygonXml(polygons[0]!, 0);
  return `<gml:MultiSurface gml:id="${id}.g" ${attrs}>${polygons.map((p, i) => `<gml:surfaceMember>${polygonXml(p, i)}</gml:surfaceMember>`).join("")}</gml:MultiSurface>`;
}

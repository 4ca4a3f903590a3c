import type { OutputMeta, WriteResult } from "./meta";
import { metadataDocument } from "./meta";
import { FileSink } from "./file-sink";
import { asFeature, outputMembers, rewindRfc7946, segmentCount, vertexCount } from "./features";
import { normaliseCrsCode } from "../crs";

/**
 * GeoJSON output (RFC 7946): one FeatureCollection, one Feature per input feature in order, with
 * `properties` as given, `geometry` the discretised curve and the foreign member `curves`
 * (DESIGN.md). The metadata goes in a foreign member `metadata` of the FeatureCollection
 * (RFC 7946 §6.1 allows foreign members). Polygon rings are rewound to RFC 7946 §3.1.6's
 * winding (exterior counter-clockwise) together with their curves. Coordinates in a CRS other than WGS 84 also get the
 * GeoJSON 2008 `crs` member, which RFC 7946 §4 leaves to prior arrangement between the parties:
 * such a file is not RFC 7946 GeoJSON, and its metadata says so.
 */
export async function writeGeoJSON(features: AsyncIterable<object>, path: string, meta: OutputMeta): Promise<Omit<WriteResult, "files" | "format" | "mediaType">> {
  const sink = await FileSink.create(path);
  let count = 0;
  let vertices = 0;
  let segments = 0;
  const notes: string[] = [];
  try {
    const crs = normaliseCrsCode(meta.crs ?? "EPSG:4326");
    if (crs !== "EPSG:4326") notes.push(`coordinates are in ${crs}, not WGS 84: the legacy "crs" member says so, and the file is not RFC 7946 GeoJSON`);
    let head = `{"type":"FeatureCollection",\n"metadata":${JSON.stringify(metadataDocument(meta, "geojson", notes))},\n`;
    if (crs !== "EPSG:4326") {
      const epsg = /^EPSG:(\d+)$/.exec(crs);
      const name = epsg ? `urn:ogc:def:crs:EPSG::${epsg[1]}` : crs;
      head += `"crs":${JSON.stringify({ type: "name", properties: { name } })},\n`;
    }
    await sink.write(head + '"features":[');
    for await (const value of features) {
      const f = rewindRfc7946(asFeature(value, count));
      const { geometry, curves } = f;
      // Members in a stable order; `properties` null when absent (RFC 7946 §3.2 requires the member).
      await sink.write((count === 0 ? "\n" : ",\n") + JSON.stringify(outputMembers(f)));
      count++;
      vertices += vertexCount(geometry);
      segments += segmentCount(curves);
    }
    await sink.write("\n]}\n");
    await sink.close();
  } catch (error) {
    await sink.abandon();
    throw error;
  }
  return { features: count, vertices, segments, bytes: sink.bytes, notes };
}

/** Newline-delimited GeoJSON: one Feature per line; the metadata goes to a sidecar JSON file. */
export async function writeNdjson(features: AsyncIterable<object>, path: string): Promise<Omit<WriteResult, "files" | "format" | "mediaType">> {
  const sink = await FileSink.create(path);
  let count = 0;
  let vertices = 0;
  let segments = 0;
  try {
    for await (const value of features) {
      const f = rewindRfc7946(asFeature(value, count));
      const { geometry, curves } = f;
      await sink.write(JSON.stringify(outputMembers(f)) + "\n");
      count++;
      vertices += vertexCount(geometry);
      segments += segmentCount(curves);
    }
    await sink.close();
  } catch (error) {
    await sink.abandon();
    throw error;
  }
  return { features: count, vertices, segments, bytes: sink.bytes, notes: [] };
}

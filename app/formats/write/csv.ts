import type { Position } from "../types";
import { asFeature, partsOf, segmentCount, vertexCount } from "./features";
import { FileSink } from "./file-sink";
import type { WriteResult } from "./meta";

/**
 * CSV of control points (RFC 4180: comma-separated, CRLF line ends, a header row): one row per
 * control point with `feature` (0-based position in the output), `part` (per line, per ring in
 * order), `segment`, `point` (index within the segment, 0 = start), `x`, `y`, and `z` when
 * any point has Z. A segment of degree n has n + 1 rows; consecutive segments share their
 * joint, which appears as the last point of one and the first of the next. Features without
 * `curves` are written as straight segments (degree 1) between their vertices. The metadata
 * goes to a sidecar JSON file (CSV has no place for it).
 */
export async function writeCsv(features: AsyncIterable<object>, path: string): Promise<Omit<WriteResult, "files" | "format" | "mediaType">> {
  const sink = await FileSink.create(path);
  let count = 0;
  let vertices = 0;
  let segments = 0;
  let withZ: boolean | null = null;
  const num = (v: number | undefined) => (v === undefined || !Number.isFinite(v) ? "" : String(v));
  try {
    for await (const value of features) {
      const f = asFeature(value, count);
      const parts = partsOf(f.geometry);
      if (withZ === null) {
        withZ = parts.some((p) => p.some((q) => q.length > 2));
        await sink.write(`feature,part,segment,point,x,y${withZ ? ",z" : ""}\r\n`);
      }
      const curves: Position[][][] = Array.isArray(f.curves) && f.curves.length ? f.curves : parts.map((p) => p.slice(1).map((q, i) => [p[i]!, q]));
      let rows = "";
      curves.forEach((segs, part) =>
        segs.forEach((seg, s) =>
          seg.forEach((p, i) => {
            rows += `${count},${part},${s},${i},${num(p[0])},${num(p[1])}${withZ ? `,${num(p[2])}` : ""}\r\n`;
          }),
        ),
      );
      await sink.write(rows);
      count++;
      vertices += vertexCount(f.geometry);
      segments += segmentCount(f.curves);
    }
    if (withZ === null) await sink.write("feature,part,segment,point,x,y\r\n");
    await sink.close();
  } catch (error) {
    await sink.abandon();
    throw error;
  }
  return { features: count, vertices, segments, bytes: sink.bytes, notes: [] };
}

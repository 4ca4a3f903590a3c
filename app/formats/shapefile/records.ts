import type { LinearGeometry, Position } from "../types";

/**
 * Shape types of the ESRI Shapefile Technical Description (July 1998), table 1.
 */
export const SHAPE_TYPES: Record<number, string> = {
  0: "Null",
  1: "Point",
  3: "PolyLine",
  5: "Polygon",
  8: "MultiPoint",
  11: "PointZ",
  13: "PolyLineZ",
  15: "PolygonZ",
  18: "MultiPointZ",
  21: "PointM",
  23: "PolyLineM",
  25: "PolygonM",
  28: "MultiPointM",
  31: "MultiPatch",
};
export const LINE_SHAPES = new Set([3, 13, 23]);
export const AREA_SHAPES = new Set([5, 15, 25]);
export const POINT_SHAPES = new Set([1, 8, 11, 18, 21, 28]);

/** Values below this are "no data" for measures (the Technical Description, "Measured shape types"). */
export const M_NO_DATA = -1e38;

export interface ParsedShape {
  geometry: LinearGeometry;
  /** Measures per part (per line, per ring in file order), when the record has any. */
  measures?: number[][];
  hasZ: boolean;
}

export class RecordError extends Error {}

/**
 * Parses the content of one PolyLine/Polygon record (with Z and M variants) from the shape type
 * onwards. Layout (Technical Description, "PolyLine", "PolyLineZ", "PolyLineM"): type (4),
 * box (32), NumParts (4), NumPoints (4), Parts[NumParts] (4 each), Points[NumPoints] (16 each);
 * then for Z types Zmin, Zmax, Z[NumPoints]; then, optional in Z types, Mmin, Mmax, M[NumPoints].
 * Z goes into positions as the third ordinate; M is kept per part beside the geometry (RFC 7946
 * §3.1.1 advises against positions beyond three elements).
 */
export function parseShapeRecord(view: DataView, fileType: number): ParsedShape | null {
  const type = view.getInt32(0, true);
  if (type === 0) return null;
  const len = view.byteLength;
  if (len < 44) throw new RecordError(`the record is ${len} bytes, too short for a ${SHAPE_TYPES[fileType]}`);
  const numParts = view.getInt32(36, true);
  const numPoints = view.getInt32(40, true);
  if (numParts < 0 || numPoints < 0 || 44 + numParts * 4 + numPoints * 16 > len) {
    throw new RecordError(`the record declares ${numParts} parts and ${numPoints} points, more than its ${len} bytes hold`);
  }
  const starts: number[] = new Array(numParts);
  let o = 44;
  for (let k = 0; k < numParts; k++, o += 4) {
    const s = view.getInt32(o, true);
    if (s < 0 || s > numPoints || (k > 0 && s < starts[k - 1]!)) throw new RecordError(`part ${k} starts at point ${s}, outside the record's ${numPoints} points`);
    starts[k] = s;
  }
  const points: Position[] = new Array(numPoints);
  for (let j = 0; j < numPoints; j++, o += 16) points[j] = [view.getFloat64(o, true), view.getFloat64(o + 8, true)];
  const zType = fileType === 13 || fileType === 15;
  let hasZ = false;
  if (zType && o + 16 + numPoints * 8 <= len) {
    o += 16;
    for (let j = 0; j < numPoints; j++, o += 8) points[j]!.push(view.getFloat64(o, true));
    hasZ = true;
  }
  let m: number[] | undefined;
  if (zType || fileType === 23 || fileType === 25) {
    if (o + 16 + numPoints * 8 <= len) {
      o += 16;
      m = new Array(numPoints);
      let any = false;
      for (let j = 0; j < numPoints; j++, o += 8) {
        const v = view.getFloat64(o, true);
        m[j] = v;
        if (v > M_NO_DATA) any = true;
      }
      if (!any) m = undefined;
    }
  }
  const ranges = starts.map((s, k) => [s, k + 1 < numParts ? starts[k + 1]! : numPoints] as const);
  const parts = ranges.map(([a, b]) => points.slice(a, b));
  const measures = m ? ranges.map(([a, b]) => m!.slice(a, b)) : undefined;
  if (LINE_SHAPES.has(fileType)) {
    const geometry: LinearGeometry = parts.length === 1 ? { type: "LineString", coordinates: parts[0]! } : { type: "MultiLineString", coordinates: parts };
    return { geometry, ...(measures ? { measures } : {}), hasZ };
  }
  return { geometry: groupRings(parts), ...(measures ? { measures } : {}), hasZ };
}

/**
 * Groups Shapefile rings into polygons. The Technical Description ("Polygon") orders outer rings
 * clockwise and holes counter-clockwise, in any order; each hole joins the first outer ring
 * that contains one of its vertices, and a hole that no outer ring contains becomes a polygon of
 * its own (as the `shapefile` package does). Rings keep their orientation as stored.
 */
export function groupRings(rings: Position[][]): LinearGeometry {
  const polygons: Position[][][] = [];
  const holes: Position[][] = [];
  for (const ring of rings) (signedArea(ring) <= 0 && ring.length >= 4 ? polygons.push([ring]) : holes.push(ring));
  for (const hole of holes) {
    const owner = polygons.find((p) => ringContainsRing(p[0]!, hole));
    if (owner) owner.push(hole);
    else polygons.push([hole]);
  }
  return polygons.length === 1 ? { type: "Polygon", coordinates: polygons[0]! } : { type: "MultiPolygon", coordinates: polygons };
}

/** Shoelace formula: positive for counter-clockwise rings (y up). */
export function signedArea(ring: Position[]): number {
  let a = 0;
  for (let i = 0, n = ring.length, j = n - 1; i < n; j = i++) a += (ring[j]![0]! - ring[i]![0]!) * (ring[j]![1]! + ring[i]![1]!);
  return a / 2;
}

function ringContainsRing(outer: Position[], inner: Position[]): boolean {
  for (const p of inner) {
    const c = pointInRing(outer, p);
    if (c !== 0) return c > 0;
  }
  return false;
}

/** Even-odd ray casting: 1 inside, -1 outside, 0 on the boundary. */
function pointInRing(ring: Position[], p: Position): number {
  const x = p[0]!;
  const y = p[1]!;
  let inside = -1;
  for (let i = 0, n = ring.length, j = n - 1; i < n; j = i++) {
    const xi = ring[i]![0]!;
    const yi = ring[i]![1]!;
    const xj = ring[j]![0]!;
    const yj = ring[j]![1]!;
    if ((x === xi && y === yi) || (x === xj && y === yj)) return 0;
    if (yi > y !== yj > y && x < ((xj - xi) * (y - yi)) / (yj - yi) + xi) inside = -inside;
  }
  return inside;
}

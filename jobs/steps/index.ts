/**
 * Per-feature step runners shared by the worker and the command line: one GeoJSON Feature in,
 * one Feature out (DESIGN.md, geometry contracts), with its feature report.
 *
 * Output: same members and properties; `geometry` is the discretised curve with the input's
 * geometry type; the foreign member `curves` holds, per part (per LineString, per ring in order,
 * polygons of a MultiPolygon one after another), the list of segments, each a list of control
 * points. Tolerances are metres on the ground; see app/geometry/crs.ts for the local frames.
 */
import { boxOf, describeCrs, localFrame, type CrsKind, type Frame } from "../../app/geometry/crs";
import { discretisePath, discretiseSegment } from "../../app/geometry/discretise";
import { toDegree } from "../../app/geometry/elevate";
import { fit } from "../../app/geometry/fit";
import type { Point, Segment } from "../../app/geometry/types";

export type StepName = "fit" | "elevate" | "discretise";
export interface FitParams {
  /** Metres on the ground. */
  tolerance: number;
  /** Degrees; default DEFAULT_CORNER_ANGLE (app/geometry/fit.ts). */
  cornerAngle?: number;
  /** Metres; tolerance of the `geometry` written beside the curves. Default: tolerance / 10. */
  geometryTolerance?: number;
}
export interface ElevateParams {
  degree: number;
  /** Metres; tolerance of the `geometry` when a segment had to be reduced. Default 0.1 m. */
  geometryTolerance?: number;
}
export interface DiscretiseParams {
  tolerance: number;
}
export interface FeatureReport {
  index: number;
  verticesIn: number;
  segmentsOut: number;
  /** Metres on the ground. */
  maxDeviation: number;
  rmsDeviation: number;
  status: "ok" | "repaired" | "skipped" | "error";
  reason?: string;
}
/** "EPSG:4326" for RFC 7946 GeoJSON, else an EPSG code proj4 knows. */
export interface CrsInfo {
  code: string;
}

/** A GeoJSON position list per part and how to rebuild the geometry from new parts. */
interface Parts {
  type: "LineString" | "MultiLineString" | "Polygon" | "MultiPolygon";
  parts: number[][][];
  closed: boolean[];
  /** Rings per polygon for MultiPolygon. */
  shape: number[];
  hasExtraOrdinates: boolean;
}

class FeatureError extends Error {}

const kindCache = new Map<string, CrsKind>();
function crsKind(crs: CrsInfo): CrsKind {
  let k = kindCache.get(crs.code);
  if (!k) {
    k = describeCrs(crs.code);
    kindCache.set(crs.code, k);
  }
  return k;
}

export function runFeatureStep(
  step: StepName,
  params: FitParams | ElevateParams | DiscretiseParams,
  feature: unknown,
  index: number,
  crs: CrsInfo,
): { feature: object; report: FeatureReport } {
  const kind = crsKind(crs); // an unknown CRS is the caller's error: throws
  const report: FeatureReport = { index, verticesIn: 0, segmentsOut: 0, maxDeviation: 0, rmsDeviation: 0, status: "ok" };
  if (!feature || typeof feature !== "object" || (feature as { type?: unknown }).type !== "Feature") {
    return { feature: (feature ?? null) as object, report: { ...report, status: "error", reason: "not a GeoJSON Feature" } };
  }
  const f = feature as Record<string, unknown> & { geometry?: unknown };
  try {
    const parts = readParts(f.geometry, kind);
    if (!parts) {
      const g = f.geometry as { type?: unknown } | null | undefined;
      const what = g == null ? "feature has no geometry" : `geometry type ${String(g.type)} is not a line or polygon`;
      return { feature: f, report: { ...report, status: "skipped", reason: `${what}; passed through unchanged` } };
    }
    if (step === "fit") return runFit(params as FitParams, f, parts, kind, report);
    if (step === "elevate") return runElevate(params as ElevateParams, f, parts, kind, report);
    if (step === "discretise") return runDiscretise(params as DiscretiseParams, f, parts, kind, report);
    throw new Error(`unknown step "${String(step)}"`);
  } catch (e) {
    if (e instanceof FeatureError) return { feature: f, report: { ...report, status: "error", reason: e.message } };
    throw e;
  }
}

function isPos(p: unknown): p is number[] {
  return Array.isArray(p) && p.length >= 2 && Number.isFinite(p[0]) && Number.isFinite(p[1]) && p.slice(2).every((v) => typeof v === "number");
}

function readParts(geometry: unknown, kind: CrsKind): Parts | null {
  if (!geometry || typeof geometry !== "object") return null;
  const g = geometry as { type?: unknown; coordinates?: unknown };
  const t = g.type;
  if (t !== "LineString" && t !== "MultiLineString" && t !== "Polygon" && t !== "MultiPolygon") return null;
  const c = g.coordinates;
  const list = (v: unknown, what: string): unknown[] => {
    if (!Array.isArray(v)) throw new FeatureError(`${what} is not an array`);
    return v;
  };
  let rawParts: unknown[];
  let closed: boolean[];
  let shape: number[] = [];
  if (t === "LineString") {
    rawParts = [c];
    closed = [false];
  } else if (t === "MultiLineString") {
    rawParts = list(c, "MultiLineString coordinates");
    closed = rawParts.map(() => false);
  } else if (t === "Polygon") {
    rawParts = list(c, "Polygon coordinates");
    closed = rawParts.map(() => true);
  } else {
    const polys = list(c, "MultiPolygon coordinates");
    rawParts = [];
    for (let i = 0; i < polys.length; i++) {
      const rings = list(polys[i], `polygon ${i}`);
      shape.push(rings.length);
      rawParts.push(...rings);
    }
    closed = rawParts.map(() => true);
  }
  let extra = false;
  const parts = rawParts.map((part, pi) => {
    const pts = list(part, `part ${pi}`);
    for (let i = 0; i < pts.length; i++) {
      if (!isPos(pts[i])) throw new FeatureError(`position ${i} of part ${pi} is not a pair of finite numbers`);
      if ((pts[i] as number[]).length > 2) extra = true;
      if (kind.kind === "geographic") {
        const [x, y] = pts[i] as number[];
        if (x < -180 || x > 180 || y < -90 || y > 90)
          throw new FeatureError(`position ${i} of part ${pi} (${x}, ${y}) is outside the longitude/latitude range of ${kind.code}`);
      }
    }
    if (pts.length === 0) throw new FeatureError(`part ${pi} has no positions`);
    return pts as number[][];
  });
  if (t !== "MultiPolygon") shape = [];
  return { type: t, parts, closed, shape, hasExtraOrdinates: extra };
}

function rebuild(parts: Parts, lines: Point[][]): { type: string; coordinates: unknown } {
  switch (parts.type) {
    case "LineString":
      return { type: "LineString", coordinates: lines[0] };
    case "MultiLineString":
      return { type: "MultiLineString", coordinates: lines };
    case "Polygon":
      return { type: "Polygon", coordinates: lines };
    case "MultiPolygon": {
      const polys: Point[][][] = [];
      let k = 0;
      for (const count of parts.shape) {
        polys.push(lines.slice(k, k + count));
        k += count;
      }
      return { type: "MultiPolygon", coordinates: polys };
    }
  }
}

function output(f: Record<string, unknown>, geometry: object, curves: unknown): object {
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(f)) if (k !== "geometry" && k !== "curves" && k !== "bbox") out[k] = v;
  out.geometry = geometry;
  out.curves = curves;
  if ("bbox" in f) {
    const all = ((geometry as { coordinates: unknown }).coordinates as unknown[]).flat(3) as number[];
    const pts: number[][] = [];
    for (let i = 0; i + 1 < all.length; i += 2) pts.push([all[i], all[i + 1]]);
    out.bbox = boxOf(pts);
  }
  if (!("properties" in out)) out.properties = null;
  return out;
}

function frameFor(kind: CrsKind, pts: readonly (readonly number[])[]): Frame {
  return localFrame(kind, boxOf(pts));
}

/** Discretise source-CRS segments in the part's frame; the end points stay exact. */
function discretiseInFrame(frame: Frame, segs: Segment[], tol: number): { line: Point[]; maxDev: number; sumSq: number; edges: number } {
  const line: Point[] = [];
  let maxDev = 0;
  let sumSq = 0;
  let edges = 0;
  for (const seg of segs) {
    const local = seg.map((p) => frame.toLocal(p));
    const r = discretiseSegment(local, tol);
    maxDev = Math.max(maxDev, r.maxDeviation);
    const pts = r.points.map((p) => frame.toSource(p));
    pts[0] = [seg[0][0], seg[0][1]];
    pts[pts.length - 1] = [seg[seg.length - 1][0], seg[seg.length - 1][1]];
    edges += pts.length - 1;
    sumSq += (pts.length - 1) * r.maxDeviation ** 2;
    for (let i = line.length > 0 ? 1 : 0; i < pts.length; i++) line.push(pts[i]);
  }
  return { line, maxDev, sumSq, edges };
}

function checkTolerance(v: unknown, name: string): number {
  if (typeof v !== "number" || !(v > 0) || !Number.isFinite(v)) throw new Error(`${name} must be a positive number of metres, got ${String(v)}`);
  return v;
}

function runFit(params: FitParams, f: Record<string, unknown>, parts: Parts, kind: CrsKind, report: FeatureReport) {
  const tol = checkTolerance(params.tolerance, "tolerance");
  const gtol = params.geometryTolerance === undefined ? tol / 10 : checkTolerance(params.geometryTolerance, "geometryTolerance");
  const curves: number[][][][] = [];
  const lines: Point[][] = [];
  const notes: string[] = [];
  let sumSq = 0;
  let repaired = false;
  for (let pi = 0; pi < parts.parts.length; pi++) {
    const src = parts.parts[pi];
    const frame = frameFor(kind, src);
    const local = src.map((p) => frame.toLocal(p));
    const r = fit(local, { tolerance: tol, cornerAngle: params.cornerAngle, closed: parts.closed[pi] });
    const segs: Segment[] = r.segments.map((s) => s.map((p) => frame.toSource(p)));
    // Joints sit on input vertices: give them the input's exact coordinates.
    for (let i = 0; i < segs.length; i++) {
      const a = src[r.joints[i]];
      const b = src[r.joints[i + 1]];
      segs[i][0] = [a[0], a[1]];
      segs[i][segs[i].length - 1] = [b[0], b[1]];
    }
    curves.push(segs);
    const d = discretiseInFrame(frame, segs, gtol);
    if (parts.closed[pi] && d.line.length > 0) d.line[d.line.length - 1] = [d.line[0][0], d.line[0][1]];
    lines.push(d.line);
    report.verticesIn += src.length;
    report.segmentsOut += segs.length;
    report.maxDeviation = Math.max(report.maxDeviation, r.maxDeviation);
    sumSq += r.rmsDeviation ** 2 * src.length;
    if (r.repairs.length) {
      repaired = true;
      notes.push(...r.repairs.map((x) => (parts.parts.length > 1 ? `part ${pi}: ${x}` : x)));
    }
  }
  report.rmsDeviation = report.verticesIn > 0 ? Math.sqrt(sumSq / report.verticesIn) : 0;
  if (parts.hasExtraOrdinates) notes.push("Z/M values dropped: fit works in x and y");
  if (repaired) report.status = "repaired";
  if (notes.length) report.reason = notes.join("; ");
  return { feature: output(f, rebuild(parts, lines), curves), report };
}

function readCurves(f: Record<string, unknown>, parts: Parts): Segment[][] | null {
  const c = f.curves;
  if (c === undefined) return null;
  if (!Array.isArray(c)) throw new FeatureError("curves member is not an array");
  if (c.length !== parts.parts.length) throw new FeatureError(`curves member has ${c.length} parts but the geometry has ${parts.parts.length}`);
  return c.map((part, pi) => {
    if (!Array.isArray(part)) throw new FeatureError(`curves part ${pi} is not an array of segments`);
    return part.map((seg, si) => {
      if (!Array.isArray(seg) || seg.length < 2) throw new FeatureError(`curves part ${pi} segment ${si} needs at least two control points`);
      return seg.map((p, ci) => {
        if (!isPos(p)) throw new FeatureError(`curves part ${pi} segment ${si} control point ${ci} is not a pair of finite numbers`);
        return [p[0], p[1]] as Point;
      });
    });
  });
}

function runElevate(params: ElevateParams, f: Record<string, unknown>, parts: Parts, kind: CrsKind, report: FeatureReport) {
  const m = params.degree;
  if (!Number.isInteger(m) || m < 1) throw new Error(`degree must be a positive integer, got ${String(m)}`);
  const gtol = params.geometryTolerance === undefined ? 0.1 : checkTolerance(params.geometryTolerance, "geometryTolerance");
  let curves = readCurves(f, parts);
  const notes: string[] = [];
  if (!curves) {
    curves = parts.parts.map((pts) => pts.slice(1).map((p, i) => [[pts[i][0], pts[i][1]] as Point, [p[0], p[1]] as Point]));
    notes.push("no curves member: the geometry's edges were taken as straight segments");
  }
  let reduced = false;
  let sumSq = 0;
  let count = 0;
  const out: Segment[][] = [];
  const lines: Point[][] = [];
  for (let pi = 0; pi < curves.length; pi++) {
    const frame = frameFor(kind, curves[pi].flat());
    const segs: Segment[] = [];
    for (const seg of curves[pi]) {
      report.verticesIn += seg.length;
      const local = seg.map((p) => frame.toLocal(p));
      const r = toDegree(local, m);
      if (r.errorBound > 0 || seg.length - 1 > m) reduced = true;
      report.maxDeviation = Math.max(report.maxDeviation, r.errorBound);
      sumSq += r.errorBound ** 2;
      count++;
      const back = r.segment.map((p) => frame.toSource(p));
      back[0] = [seg[0][0], seg[0][1]];
      back[back.length - 1] = [seg[seg.length - 1][0], seg[seg.length - 1][1]];
      segs.push(back);
    }
    out.push(segs);
    report.segmentsOut += segs.length;
    lines.push(discretiseInFrame(frame, segs, gtol).line);
  }
  report.rmsDeviation = count ? Math.sqrt(sumSq / count) : 0;
  if (reduced) notes.push(`segments above degree ${m} were reduced (least squares; max deviation reported)`);
  if (notes.length) report.reason = notes.join("; ");
  const geometry = reduced ? rebuild(parts, lines) : (f.geometry as object);
  return { feature: output(f, geometry, out), report };
}

function runDiscretise(params: DiscretiseParams, f: Record<string, unknown>, parts: Parts, kind: CrsKind, report: FeatureReport) {
  const tol = checkTolerance(params.tolerance, "tolerance");
  const curves = readCurves(f, parts);
  if (!curves) return { feature: f, report: { ...report, status: "skipped" as const, reason: "no curves member; geometry passed through unchanged" } };
  const lines: Point[][] = [];
  let sumSq = 0;
  for (let pi = 0; pi < curves.length; pi++) {
    const segs = curves[pi];
    report.verticesIn += segs.reduce((a, s) => a + s.length, 0);
    if (segs.length === 0) throw new FeatureError(`curves part ${pi} has no segments`);
    const frame = frameFor(kind, segs.flat());
    const d = discretiseInFrame(frame, segs, tol);
    if (parts.closed[pi]) {
      const a = d.line[0];
      const b = d.line[d.line.length - 1];
      if (a[0] !== b[0] || a[1] !== b[1]) d.line.push([a[0], a[1]]);
    }
    lines.push(d.line);
    report.segmentsOut += d.edges;
    report.maxDeviation = Math.max(report.maxDeviation, d.maxDev);
    sumSq += d.sumSq;
  }
  report.rmsDeviation = report.segmentsOut ? Math.sqrt(sumSq / report.segmentsOut) : 0;
  return { feature: output(f, rebuild(parts, lines), f.curves), report };
}

export { discretisePath };

/**
 * Measure how far a Bézier path and a polyline are from each other, independently of how the
 * path was made: the same code serves the feature reports' checks and the tests.
 *
 *  - pathToPolyline: sup over path points of the distance to the polyline. Branch and bound over
 *    curve pieces: a piece is within d of an edge when all its control points are (distance to an
 *    edge is convex; convex hull property), and any curve point gives a lower bound.
 *  - polylineToPath: sup over polyline points (vertices and edge interiors) of the distance to the
 *    path. Branch and bound along each edge: on a piece [x_a, x_b] of the edge, every point is
 *    within max(|x_a − q|, |x_b − q|) of any fixed path point q (distance to a point is convex
 *    along a line), with q the nearest path point to either end; the bound tightens
 *    quadratically as pieces shrink; and when both ends' nearest points are on one segment whose
 *    piece between them is a graph over its chord, the larger end distance plus that piece's
 *    height (from its control points) bounds the edge piece too.
 * The two-sided Hausdorff distance is the larger of the two (e.g. Alt & Guibas, "Discrete
 * geometric shapes: matching, interpolation, and approximation", Handbook of Computational
 * Geometry, 1999, §2). Values returned are upper bounds within `accuracy` of the true value.
 */
import { controlBox, subSegment } from "./bezier";
import { GridIndex } from "./grid";
import { nearestPoint, pointEdgeDistance } from "./nearest";
import type { Box, Path, Point, Segment } from "./types";

function extentOf(boxes: Box[]): Box {
  const e: Box = [Infinity, Infinity, -Infinity, -Infinity];
  for (const b of boxes) {
    e[0] = Math.min(e[0], b[0]);
    e[1] = Math.min(e[1], b[1]);
    e[2] = Math.max(e[2], b[2]);
    e[3] = Math.max(e[3], b[3]);
  }
  return e;
}

/** A path prepared for repeated point-distance queries. */
export class PathDistance {
  private readonly index: GridIndex;
  constructor(private readonly path: Path) {
    const boxes = path.map(controlBox);
    this.index = new GridIndex(boxes, extentOf(boxes));
  }
  distance(p: Point): number {
    return this.nearest(p).distance;
  }
  /** Nearest path point and its distance. */
  nearest(p: Point): { distance: number; point: Point; id: number; t: number } {
    if (this.path.length === 0) return { distance: Infinity, point: [NaN, NaN], id: -1, t: 0 };
    let point: Point = [NaN, NaN];
    let t = 0;
    const r = this.index.nearest(p[0], p[1], (id) => nearestPoint(this.path[id], p).distance);
    if (r.id >= 0) {
      const n = nearestPoint(this.path[r.id], p);
      point = n.point;
      t = n.t;
    }
    return { distance: r.distance, point, id: r.id, t };
  }
  segment(id: number): Segment {
    return this.path[id];
  }
}

/** A polyline prepared for repeated point and piece distance queries. */
export class PolylineDistance {
  readonly index: GridIndex;
  constructor(readonly points: readonly Point[]) {
    const boxes: Box[] = [];
    for (let i = 0; i + 1 < points.length; i++) {
      const a = points[i];
      const b = points[i + 1];
      boxes.push([Math.min(a[0], b[0]), Math.min(a[1], b[1]), Math.max(a[0], b[0]), Math.max(a[1], b[1])]);
    }
    if (points.length === 1) boxes.push([points[0][0], points[0][1], points[0][0], points[0][1]]);
    this.index = new GridIndex(boxes, extentOf(boxes));
  }
  edgeDistance(id: number, p: readonly number[]): number {
    const a = this.points[id];
    const b = this.points[Math.min(id + 1, this.points.length - 1)];
    return pointEdgeDistance(p[0], p[1], a[0], a[1], b[0], b[1]);
  }
  distance(p: readonly number[]): number {
    return this.index.nearest(p[0], p[1], (id) => this.edgeDistance(id, p)).distance;
  }
}

export interface OneSided {
  /** Upper bound of the supremum. */
  max: number;
  /** A point where at least max − accuracy is reached. */
  where: Point;
}

/** sup over the path of the distance to the polyline (see module comment). */
export function pathToPolyline(path: Path, polyline: readonly Point[], accuracy: number): OneSided {
  const poly = new PolylineDistance(polyline);
  let lower = 0;
  let where: Point = path.length ? [path[0][0][0], path[0][0][1]] : [0, 0];
  let upperLeft = 0;
  type Item = { seg: Segment; ub: number };
  const bound = (seg: Segment): number => {
    const q0 = seg[0];
    const d0 = poly.distance(q0);
    const dn = poly.distance(seg[seg.length - 1]);
    if (d0 > lower) {
      lower = d0;
      where = [q0[0], q0[1]];
    }
    if (dn > lower) {
      lower = dn;
      where = [seg[seg.length - 1][0], seg[seg.length - 1][1]];
    }
    let diam = 0;
    for (const q of seg) diam = Math.max(diam, Math.hypot(q[0] - q0[0], q[1] - q0[1]));
    const r = d0 + diam;
    let ub = Infinity;
    for (const id of poly.index.query([q0[0] - r, q0[1] - r, q0[0] + r, q0[1] + r])) {
      let m = 0;
      for (const q of seg) {
        m = Math.max(m, poly.edgeDistance(id, q));
        if (m >= ub) break;
      }
      if (m < ub) ub = m;
    }
    return ub;
  };
  const stack: Item[] = path.map((seg) => ({ seg, ub: bound(seg) }));
  let guard = 0;
  while (stack.length) {
    const it = stack.pop()!;
    if (it.ub <= lower + accuracy) continue;
    let diam = 0;
    for (const q of it.seg) diam = Math.max(diam, Math.hypot(q[0] - it.seg[0][0], q[1] - it.seg[0][1]));
    if (diam <= accuracy * 1e-3 || guard++ > 2_000_000) {
      upperLeft = Math.max(upperLeft, it.ub);
      continue;
    }
    const left = subSegment(it.seg, 0, 0.5);
    const right = subSegment(it.seg, 0.5, 1);
    stack.push({ seg: left, ub: bound(left) }, { seg: right, ub: bound(right) });
  }
  return { max: Math.max(lower + accuracy, upperLeft), where };
}

/** sup over the polyline (edges included) of the distance to the path (see module comment). */
export function polylineToPath(polyline: readonly Point[], path: Path, accuracy: number): OneSided {
  const dist = new PathDistance(path);
  let lower = 0;
  let where: Point = polyline.length ? [polyline[0][0], polyline[0][1]] : [0, 0];
  const nv = polyline.map((p) => dist.nearest(p));
  nv.forEach((n, i) => {
    if (n.distance > lower) {
      lower = n.distance;
      where = [polyline[i][0], polyline[i][1]];
    }
  });
  type Near = ReturnType<PathDistance["nearest"]>;
  type Item = { s: number; t: number; ps: Point; pt: Point; ns: Near; nt: Near };
  const bound = (it: Item) => {
    const via = (q: Point) => Math.max(Math.hypot(it.ps[0] - q[0], it.ps[1] - q[1]), Math.hypot(it.pt[0] - q[0], it.pt[1] - q[1]));
    let ub = Math.min(via(it.ns.point), via(it.nt.point));
    // Chord bound: when both ends' nearest points lie on one segment and the curve piece between
    // them is a graph over its chord with height h, every point of the edge piece is within
    // max(d_s, d_t) (distance to the chord is convex along the edge) plus h of the curve.
    if (it.ns.id === it.nt.id && it.ns.id >= 0) {
      const piece = subSegment(dist.segment(it.ns.id), it.ns.t, it.nt.t);
      const n = piece.length - 1;
      const ax = piece[0][0], ay = piece[0][1];
      const len = Math.hypot(piece[n][0] - ax, piece[n][1] - ay);
      let h = 0;
      let monotone = true;
      if (len > 0) {
        const ux = (piece[n][0] - ax) / len, uy = (piece[n][1] - ay) / len;
        let prev = 0;
        for (let j = 0; j <= n; j++) {
          const rx = piece[j][0] - ax, ry = piece[j][1] - ay;
          const tau = rx * ux + ry * uy;
          if (j > 0 && tau < prev) monotone = false;
          prev = tau;
          h = Math.max(h, Math.abs(-rx * uy + ry * ux));
        }
      } else {
        for (const q of piece) h = Math.max(h, Math.hypot(q[0] - ax, q[1] - ay));
      }
      if (monotone) ub = Math.min(ub, Math.max(it.ns.distance, it.nt.distance) + h);
    }
    return ub;
  };
  for (let i = 0; i + 1 < polyline.length; i++) {
    const a = polyline[i];
    const b = polyline[i + 1];
    const stack: Item[] = [{ s: 0, t: 1, ps: a, pt: b, ns: nv[i], nt: nv[i + 1] }];
    let guard = 0;
    while (stack.length) {
      const it = stack.pop()!;
      const ub = bound(it);
      if (ub <= lower + accuracy) continue;
      const m = 0.5 * (it.s + it.t);
      const pm: Point = [a[0] + m * (b[0] - a[0]), a[1] + m * (b[1] - a[1])];
      const nm = dist.nearest(pm);
      if (nm.distance > lower) {
        lower = nm.distance;
        where = pm;
      }
      if (guard++ > 1_000_000) {
        lower = Math.max(lower, ub - accuracy);
        continue;
      }
      stack.push({ s: it.s, t: m, ps: it.ps, pt: pm, ns: it.ns, nt: nm }, { s: m, t: it.t, ps: pm, pt: it.pt, ns: nm, nt: it.nt });
    }
  }
  return { max: lower + accuracy, where };
}

export interface Hausdorff {
  pathToPolyline: number;
  polylineToPath: number;
  /** The two-sided Hausdorff distance (upper bound within the accuracy). */
  value: number;
}

export function hausdorff(polyline: readonly Point[], path: Path, accuracy: number): Hausdorff {
  const a = pathToPolyline(path, polyline, accuracy).max;
  const b = polylineToPath(polyline, path, accuracy).max;
  return { pathToPolyline: a, polylineToPath: b, value: Math.max(a, b) };
}

/** Root mean square of the vertex-to-path distances. */
export function rmsVertexDistance(polyline: readonly Point[], path: Path): number {
  if (polyline.length === 0) return 0;
  const dist = new PathDistance(path);
  let s = 0;
  for (const p of polyline) s += dist.distance(p) ** 2;
  return Math.sqrt(s / polyline.length);
}

/**
 * Nearest point on a Bézier segment to a given point.
 *
 * The squared distance |B(t) − p|² is stationary where (B(t) − p)·B′(t) = 0, a polynomial of
 * degree 2n − 1 whose Bernstein coefficients come from products of Bernstein forms (Farin,
 * *Curves and Surfaces for CAGD*, §5.8 on products). Its roots in [0, 1], found by subdivision,
 * together with the two ends, contain the nearest point (the classical formulation; see also
 * Schneider, "Solving the nearest-point-on-curve problem", Graphics Gems, 1990).
 */
import { bernsteinProduct, bernsteinRoots } from "./bernstein";
import { evaluate, hodograph } from "./bezier";
import type { Point, Segment } from "./types";

export interface Nearest {
  t: number;
  point: Point;
  distance: number;
}

export function nearestPoint(seg: Segment, p: Point): Nearest {
  const consider = (t: number, best: Nearest | null): Nearest => {
    const q = evaluate(seg, t);
    const d = Math.hypot(q[0] - p[0], q[1] - p[1]);
    return best && best.distance <= d ? best : { t, point: q, distance: d };
  };
  let best = consider(0, null);
  best = consider(1, best);
  if (seg.length < 2) return best;
  const h = hodograph(seg);
  const ax = seg.map((q) => q[0] - p[0]);
  const ay = seg.map((q) => q[1] - p[1]);
  const px = bernsteinProduct(ax, h.map((q) => q[0]));
  const py = bernsteinProduct(ay, h.map((q) => q[1]));
  const f = px.map((v, i) => v + py[i]);
  for (const t of bernsteinRoots(f)) best = consider(t, best);
  return best;
}

/** Distance from p to the segment [a, b] of a polyline. */
export function pointEdgeDistance(px: number, py: number, ax: number, ay: number, bx: number, by: number): number {
  const dx = bx - ax;
  const dy = by - ay;
  const len2 = dx * dx + dy * dy;
  let t = len2 > 0 ? ((px - ax) * dx + (py - ay) * dy) / len2 : 0;
  if (t < 0) t = 0;
  else if (t > 1) t = 1;
  return Math.hypot(px - (ax + t * dx), py - (ay + t * dy));
}

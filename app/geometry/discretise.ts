/**
 * Discretise (flatten) Bézier curves of any degree to polylines within a tolerance.
 *
 * Promise (metric: two-sided Hausdorff distance between each curve and its polyline): at most
 * `tolerance`. Vertices lie on the curve; the end points are exact.
 *
 * Method: greedy, each chord made as long as the tolerance allows (exponential then binary search
 * on the parameter), with an exact acceptance test for a piece B([t0, t1]) against its chord:
 * written in the chord's frame, the piece's normal offset d(t) and tangential position τ(t) are
 * Bernstein polynomials (the control points' coordinates in that frame). If τ is non-decreasing
 * the piece is the graph of a function over the chord, and then the Hausdorff distance between
 * piece and chord equals max |d(t)|, found by branch and bound on the Bernstein coefficients
 * (convex hull property). Pieces that double back (cusps, loops) are accepted only when their
 * control hull's diameter is within the tolerance, which bounds the Hausdorff distance too.
 * Greedy longest-step covering gives the fewest vertices when acceptance is inherited by
 * sub-pieces (common practice for interval covering); the count is compared with Wang's formula
 * (Goldman, *Pyramid Algorithms*, 2003, §5.6) and uniform steps in the benchmark.
 */
import { bernsteinMaxAbs } from "./bernstein";
import { evaluate, subSegment } from "./bezier";
import type { Path, Point, Segment } from "./types";

export interface DiscretiseResult {
  points: Point[];
  /** Largest accepted piece deviation (an upper bound of the Hausdorff distance). */
  maxDeviation: number;
}

/** Whether the piece (already cut out) is within tol of its chord; returns its deviation or -1. */
export function pieceChordDeviation(piece: Segment, tol: number): number {
  const n = piece.length - 1;
  const ax = piece[0][0], ay = piece[0][1];
  const bx = piece[n][0], by = piece[n][1];
  const len = Math.hypot(bx - ax, by - ay);
  // Hull diameter: a cheap sufficient test and the one that handles loops and cusps.
  let diam = 0;
  for (let i = 0; i <= n; i++)
    for (let j = i + 1; j <= n; j++) diam = Math.max(diam, Math.hypot(piece[i][0] - piece[j][0], piece[i][1] - piece[j][1]));
  if (len <= 0) return diam <= tol ? diam : -1;
  const ux = (bx - ax) / len, uy = (by - ay) / len;
  const d = new Array<number>(n + 1);
  let monotone = true;
  let prevTau = 0;
  let maxAbsCoeff = 0;
  for (let i = 0; i <= n; i++) {
    const rx = piece[i][0] - ax, ry = piece[i][1] - ay;
    const tau = rx * ux + ry * uy;
    d[i] = -rx * uy + ry * ux;
    if (Math.abs(d[i]) > maxAbsCoeff) maxAbsCoeff = Math.abs(d[i]);
    if (i > 0 && tau < prevTau) monotone = false;
    prevTau = tau;
  }
  if (monotone) {
    // Non-decreasing Bernstein coefficients of τ ⇒ τ′ ≥ 0 (coefficients of τ′ are their differences).
    if (maxAbsCoeff <= tol) return maxAbsCoeff;
    const m = bernsteinMaxAbs(d, tol * 1e-3);
    // m.value is a lower bound within the accuracy: accept only with that margin.
    if (m.value + tol * 1e-3 <= tol) return m.value + tol * 1e-3;
    if (diam <= tol) return diam;
    return -1;
  }
  return diam <= tol ? diam : -1;
}

/** Flatten one segment; the first point is included, so joined outputs drop their first point. */
export function discretiseSegment(seg: Segment, tolerance: number): DiscretiseResult {
  if (!(tolerance > 0) || !Number.isFinite(tolerance)) throw new RangeError(`discretise: tolerance must be a positive number, got ${tolerance}`);
  const n = seg.length - 1;
  const first: Point = [seg[0][0], seg[0][1]];
  if (n <= 0) return { points: [first], maxDeviation: 0 };
  const last: Point = [seg[n][0], seg[n][1]];
  if (n === 1) return { points: [first, last], maxDeviation: 0 };
  // 0.1 % under the promise, so an independent measurement to 0.05 % can confirm it.
  const tol = tolerance * (1 - 1e-3);
  const points: Point[] = [first];
  let worst = 0;
  let t0 = 0;
  let step = 1;
  let guard = 0;
  while (t0 < 1 && guard++ < 1_000_000) {
    // Find the largest t1 in (t0, 1] with an accepted piece.
    let lo = t0;
    let loDev = 0;
    let hi = -1;
    let t1 = Math.min(1, t0 + step);
    for (;;) {
      const dev = pieceChordDeviation(subSegment(seg, t0, t1), tol);
      if (dev >= 0) {
        lo = t1;
        loDev = dev;
        if (t1 >= 1) break;
        t1 = Math.min(1, t0 + 2 * (t1 - t0));
      } else {
        hi = t1;
        if (lo > t0) break;
        t1 = t0 + 0.5 * (t1 - t0);
        if (t1 - t0 < 1e-15) {
          // Cannot happen for a finite curve (tiny pieces have tiny hulls); stay safe anyway.
          lo = Math.min(1, t0 + 1e-15);
          break;
        }
      }
    }
    if (hi > 0 && lo < 1) {
      // Bisection between lo (accepted) and hi (refused) to a relative precision of 1/64.
      const width0 = hi - lo;
      while (hi - lo > width0 / 64 && hi - lo > 1e-14) {
        const mid = 0.5 * (lo + hi);
        const dev = pieceChordDeviation(subSegment(seg, t0, mid), tol);
        if (dev >= 0) {
          lo = mid;
          loDev = dev;
        } else hi = mid;
      }
    }
    worst = Math.max(worst, loDev);
    step = lo - t0;
    t0 = lo;
    points.push(t0 >= 1 ? [last[0], last[1]] : evaluate(seg, t0));
  }
  return { points, maxDeviation: worst };
}

/** Flatten a path (joined segments) to one polyline; joints are vertices. */
export function discretisePath(path: Path, tolerance: number): DiscretiseResult {
  const points: Point[] = [];
  let worst = 0;
  for (const seg of path) {
    const r = discretiseSegment(seg, tolerance);
    worst = Math.max(worst, r.maxDeviation);
    const from = points.length > 0 ? 1 : 0;
    for (let i = from; i < r.points.length; i++) points.push(r.points[i]);
  }
  return { points, maxDeviation: worst };
}

/**
 * Wang's formula (Goldman, *Pyramid Algorithms*, §5.6): uniform parameter steps with
 * ⌈sqrt(n(n−1) · max_i |P_{i+2} − 2P_{i+1} + P_i| / (8 · tolerance))⌉ pieces keep each chord within
 * the tolerance of the curve. Returned as a segment count (vertices = count + 1).
 */
export function wangSegmentCount(seg: Segment, tolerance: number): number {
  const n = seg.length - 1;
  if (n < 2) return 1;
  let m = 0;
  for (let i = 0; i + 2 <= n; i++) {
    const x = seg[i + 2][0] - 2 * seg[i + 1][0] + seg[i][0];
    const y = seg[i + 2][1] - 2 * seg[i + 1][1] + seg[i][1];
    m = Math.max(m, Math.hypot(x, y));
  }
  return Math.max(1, Math.ceil(Math.sqrt((n * (n - 1) * m) / (8 * tolerance))));
}

/**
 * Fit piecewise cubic Béziers to a polyline (open or closed) within a tolerance.
 *
 * Method. Start from Schneider, "An algorithm for automatically fitting digitized curves"
 * (Graphics Gems, 1990): chord-length parameters, least squares for the control points with the
 * end points fixed, Newton–Raphson reparameterisation. Where it is weak we do otherwise:
 *  - Segmentation: instead of splitting at the worst point, each segment is extended as far along
 *    the polyline as the tolerance allows (exponential then binary search over its end vertex),
 *    which aims at the fewest segments.
 *  - Tangents: the end tangent of a segment is not estimated from two noisy neighbours; it is a
 *    free unknown of the least squares (the two inner control points are solved for, with the
 *    start tangent fixed when the segment continues a previous one). The next segment starts
 *    with that tangent, so joints are G1 by construction.
 *  - Corners: detected at the tolerance's scale (see `detectCorners`); joints there are G0.
 *  - The tolerance check is two-sided (below), not only at the vertices.
 *
 * Promise (metric: two-sided Hausdorff distance between the input polyline and the fitted path,
 * in the units of the coordinates): at most `tolerance`. Each segment is accepted only when
 *  (a) every vertex P_i of its range is within the tolerance of the curve point B(u_i) at its
 *      parameter (so within the tolerance of the path), and
 *  (b) the curve piece between u_i and u_{i+1} lies within the tolerance of the edge P_i P_{i+1},
 *      proved with the convex hull property of the piece's control points (distance to an edge is
 *      convex, so its maximum over the hull is at a control point), subdividing until proven or
 *      refuted.
 * (a) and (b) give both directions: the path is within the tolerance of the polyline, and each
 * edge is within the tolerance of its piece (the piece joins points near both ends of the edge
 * and stays near it, so its projection on the edge covers it). A two-point fallback segment
 * whose inner control points lie within half the tolerance of the edge always passes (hull
 * argument), so every search terminates and the promise holds for every input.
 */
import type { Point, Segment, Vector } from "./types";

/**
 * Default corner angle in degrees: the deflection, measured over arms of CORNER_ARM_TOLERANCES
 * tolerances either side of a vertex, from which a joint is a corner (G0) rather than smooth.
 * Why 60°: over arms of length a the chords of a smooth bend of radius R deflect by a/R, so 60°
 * with a = 3·tolerance marks bends tighter than R ≈ 2.9·tolerance; for such bends a sharp corner
 * lies within about the tolerance of the rounded bend (a 90° bend's corner point is 0.41·R from
 * the arc), so keeping a corner loses nothing the tolerance can see. Noise of a third of the
 * tolerance turns each arm's direction by at most atan(2/9) ≈ 13°, so noise alone stays well
 * below 60° and does not make false corners. Right angles (parcels, street junctions) are kept.
 */
export const DEFAULT_CORNER_ANGLE = 60;
export const CORNER_ARM_TOLERANCES = 3;

export interface FitOptions {
  /** Maximum two-sided Hausdorff distance, in coordinate units (metres in a metric frame). */
  tolerance: number;
  /** Corner angle in degrees (deflection); 180 disables corners except exact reversals. */
  cornerAngle?: number;
  /** Treat the polyline as a ring (first vertex joined to the last). */
  closed?: boolean;
}

export interface FitResult {
  /** Cubic segments, joined exactly; for a ring the last ends where the first starts. */
  segments: Segment[];
  closed: boolean;
  verticesIn: number;
  /** For each joint (segments + 1 of them), the index of the input vertex it sits on. */
  joints: number[];
  /** Indices (into the input) of vertices kept as corners. */
  corners: number[];
  /** Upper bound of the two-sided Hausdorff distance between input and path. */
  maxDeviation: number;
  /** Root mean square of the vertex-to-path distances. */
  rmsDeviation: number;
  /** What was repaired in the input before fitting (duplicates dropped, ring closed). */
  repairs: string[];
}

interface Ctx {
  xs: Float64Array;
  ys: Float64Array;
  idx: Int32Array; // index in the input for each working vertex
  tol: number;
  u: Float64Array; // scratch parameters
  uBest: Float64Array;
}

interface Trial {
  seg: Segment;
  maxErr: number;
  sumSq: number;
  s: number;
  e: number;
  /** Parameters of vertices s..e on the segment. */
  u: Float64Array;
}

const EMPTY: FitResult = {
  segments: [],
  joints: [],
  closed: false,
  verticesIn: 0,
  corners: [],
  maxDeviation: 0,
  rmsDeviation: 0,
  repairs: [],
};

/** Fit a polyline; see the module comment for the method and the promise. */
export function fit(points: readonly (readonly number[])[], options: FitOptions): FitResult {
  const tolerance = options.tolerance;
  if (!(tolerance > 0) || !Number.isFinite(tolerance)) throw new RangeError(`fit: tolerance must be a positive number, got ${tolerance}`);
  const cornerAngle = options.cornerAngle ?? DEFAULT_CORNER_ANGLE;
  if (!(cornerAngle >= 0 && cornerAngle <= 180)) throw new RangeError(`fit: cornerAngle must be within 0–180 degrees, got ${cornerAngle}`);
  for (let i = 0; i < points.length; i++) {
    const p = points[i];
    if (!p || !Number.isFinite(p[0]) || !Number.isFinite(p[1])) throw new RangeError(`fit: vertex ${i} is not a finite [x, y]`);
  }
  if (points.length === 0) return { ...EMPTY, closed: Boolean(options.closed) };

  // Working tolerance: 0.1 % under the promise, so rounding cannot push past it and an
  // independent measurement to 0.05 % (measure.ts, in the tests) can confirm it; vertices nearer
  // than 1e-7 of the tolerance to the previous kept one are dropped (far below that margin).
  const tol = tolerance * (1 - 1e-3);
  const dupEps = tolerance * 1e-7;
  const repairs: string[] = [];
  const keptX: number[] = [];
  const keptY: number[] = [];
  const keptI: number[] = [];
  const closed = Boolean(options.closed);
  let dropped = 0;
  for (let i = 0; i < points.length; i++) {
    const x = points[i][0];
    const y = points[i][1];
    const k = keptX.length;
    if (k > 0 && Math.hypot(x - keptX[k - 1], y - keptY[k - 1]) <= dupEps) {
      dropped++;
      continue;
    }
    keptX.push(x);
    keptY.push(y);
    keptI.push(i);
  }
  if (closed) {
    const k = keptX.length;
    if (k > 1 && Math.hypot(keptX[0] - keptX[k - 1], keptY[0] - keptY[k - 1]) <= dupEps) {
      keptX.pop();
      keptY.pop();
      keptI.pop();
    } else if (k > 1) {
      repairs.push("ring was not closed; closed it");
    }
  }
  if (dropped > 0) repairs.push(`dropped ${dropped} duplicate vertex${dropped === 1 ? "" : "es"}`);
  const n = keptX.length;

  if (n === 1) {
    const p: Point = [keptX[0], keptY[0]];
    return {
      segments: [[p, [p[0], p[1]], [p[0], p[1]], [p[0], p[1]]]],
      joints: [keptI[0], keptI[0]],
      closed,
      verticesIn: points.length,
      corners: [],
      maxDeviation: 0,
      rmsDeviation: 0,
      repairs: [...repairs, "part has zero length; kept as a point segment"],
    };
  }
  if (closed && n === 2) {
    // A ring through two points is an out-and-back: two straight segments, corners at both.
    const a: Point = [keptX[0], keptY[0]];
    const b: Point = [keptX[1], keptY[1]];
    return {
      segments: [line(a, b), line(b, a)],
      joints: [keptI[0], keptI[1], keptI[0]],
      closed,
      verticesIn: points.length,
      corners: [keptI[0], keptI[1]],
      maxDeviation: 0,
      rmsDeviation: 0,
      repairs,
    };
  }

  const corners = detectCorners(keptX, keptY, closed, (cornerAngle * Math.PI) / 180, CORNER_ARM_TOLERANCES * tolerance);

  // Lay out the working vertices: for a ring, start at the first corner (or vertex 0) and repeat
  // the start vertex at the end.
  const start = closed && corners.length > 0 ? corners[0] : 0;
  const m = closed ? n + 1 : n;
  const xs = new Float64Array(m);
  const ys = new Float64Array(m);
  const idx = new Int32Array(m);
  for (let j = 0; j < m; j++) {
    const k = (start + j) % n;
    xs[j] = keptX[k];
    ys[j] = keptY[k];
    idx[j] = keptI[k];
  }
  const bounds: number[] = [0];
  for (const c of corners) {
    const j = (c - start + n) % n;
    if (j > 0) bounds.push(j);
  }
  bounds.sort((a, b) => a - b);
  bounds.push(m - 1);

  const ctx: Ctx = { xs, ys, idx, tol, u: new Float64Array(m), uBest: new Float64Array(m) };
  const segments: Segment[] = [];
  let maxErr = 0;
  let sumSq = 0;
  const smoothRing = closed && corners.length === 0;
  const trials: Trial[] = [];
  for (let r = 0; r + 1 < bounds.length; r++) {
    const run = fitRun(ctx, bounds[r], bounds[r + 1], smoothRing);
    for (const t of run) {
      trials.push(t);
      segments.push(t.seg);
      if (t.maxErr > maxErr) maxErr = t.maxErr;
      sumSq += t.sumSq;
    }
  }
  let bulge = 0;
  for (const t of trials) bulge = Math.max(bulge, maxPieceDeviation(ctx, t));
  const joints = trials.length ? [idx[trials[0].s], ...trials.map((t) => idx[t.e])] : [];
  return {
    segments,
    joints,
    closed,
    verticesIn: points.length,
    corners: corners.map((c) => keptI[c]),
    // Every segment was proven within the working tolerance; the report's bound is capped by it.
    maxDeviation: Math.min(tolerance, Math.max(maxErr, bulge)),
    rmsDeviation: Math.sqrt(sumSq / m),
    repairs,
  };
}

function line(a: Point, b: Point): Segment {
  return [
    [a[0], a[1]],
    [a[0] + (b[0] - a[0]) / 3, a[1] + (b[1] - a[1]) / 3],
    [a[0] + (2 * (b[0] - a[0])) / 3, a[1] + (2 * (b[1] - a[1])) / 3],
    [b[0], b[1]],
  ];
}

/**
 * Corner detection at the tolerance's scale. At each vertex the incoming direction is the
 * principal direction (least-squares line: the major axis of the points' covariance) of the
 * polyline behind it up to the point where it first leaves the circle of radius `arm` around the
 * vertex (the vertices inside plus that exit point), oriented along travel; the outgoing
 * direction likewise ahead. Straight-line distance, not arc length, bounds the arms, because
 * noise inflates arc length on dense traces. On a sparse line the arms are simply the adjacent
 * edges; on a dense noisy trace the line fit averages the noise out (the direction error of a
 * line fitted to N points over a length a falls like σ·√(12/N)/a). A vertex whose deflection
 * reaches `angle` (radians) and is the largest within `arm` either side is a corner. Exact
 * reversals (spikes) are always corners. Arms are walked at most MAX_ARM_VERTICES vertices.
 */
export function detectCorners(xs: ArrayLike<number>, ys: ArrayLike<number>, closed: boolean, angle: number, arm: number): number[] {
  const n = xs.length;
  if (n < 3) return [];
  const wrap = (j: number) => ((j % n) + n) % n;
  const defl = new Float64Array(n);
  const first = closed ? 0 : 1;
  const last = closed ? n - 1 : n - 2;
  const reach = Math.min(MAX_ARM_VERTICES, closed ? Math.floor(n / 2) : n);
  // Walk from i in direction dir until leaving the circle; returns the principal direction.
  const armDirection = (i: number, dir: 1 | -1): { d: [number, number]; ex: number; ey: number; exited: boolean } | null => {
    const ox = xs[i];
    const oy = ys[i];
    let c = 1;
    let sx = 0, sy = 0, sxx = 0, sxy = 0, syy = 0; // relative to the vertex (which is at 0, 0)
    let ex = 0, ey = 0;
    let exited = false;
    let j = i;
    for (let k = 0; k < reach; k++) {
      const jn = j + dir;
      if (!closed && (jn < 0 || jn >= n)) break;
      const qx = xs[wrap(jn)] - ox;
      const qy = ys[wrap(jn)] - oy;
      const dq = Math.hypot(qx, qy);
      if (dq >= arm) {
        // Exit point on the edge j→jn, where the distance from the vertex reaches `arm`.
        const px = xs[wrap(j)] - ox;
        const py = ys[wrap(j)] - oy;
        const dx = qx - px, dy = qy - py;
        const A = dx * dx + dy * dy;
        const B = 2 * (px * dx + py * dy);
        const C = px * px + py * py - arm * arm;
        const disc = Math.max(0, B * B - 4 * A * C);
        const f = A > 0 ? Math.min(1, Math.max(0, (-B + Math.sqrt(disc)) / (2 * A))) : 1;
        ex = px + f * dx;
        ey = py + f * dy;
        exited = true;
        break;
      }
      ex = qx;
      ey = qy;
      j = jn;
      if (dq > 0) {
        c++;
        sx += qx;
        sy += qy;
        sxx += qx * qx;
        sxy += qx * qy;
        syy += qy * qy;
      }
    }
    if (ex === 0 && ey === 0) return null;
    c++;
    sx += ex;
    sy += ey;
    sxx += ex * ex;
    sxy += ex * ey;
    syy += ey * ey;
    const mx = sx / c, my = sy / c;
    const vxx = sxx / c - mx * mx, vxy = sxy / c - mx * my, vyy = syy / c - my * my;
    // Travel direction of the chord: from the exit point to the vertex when looking back.
    const tx = dir < 0 ? -ex : ex;
    const ty = dir < 0 ? -ey : ey;
    const tl = Math.hypot(tx, ty);
    if (c <= 2 || !(vxx + vyy > 0)) return { d: [tx / tl, ty / tl], ex, ey, exited };
    const th = 0.5 * Math.atan2(2 * vxy, vxx - vyy);
    let dx = Math.cos(th);
    let dy = Math.sin(th);
    if (dx * tx + dy * ty < 0) {
      dx = -dx;
      dy = -dy;
    }
    return { d: [dx, dy], ex, ey, exited };
  };
  for (let i = first; i <= last; i++) {
    const bk = armDirection(i, -1);
    const fw = armDirection(i, 1);
    if (!bk || !fw) continue;
    const din = bk.d;
    const dout = fw.d;
    // An arm that ends inside the circle (near an open end) is too short to judge a corner.
    if (bk.exited && fw.exited) defl[i] = Math.atan2(Math.abs(din[0] * dout[1] - din[1] * dout[0]), din[0] * dout[0] + din[1] * dout[1]);
    // A reversal within the arms (spike) is always a corner, whatever the line fits say.
    const ix = -bk.ex, iy = -bk.ey, ox = fw.ex, oy = fw.ey;
    const chordDefl = Math.atan2(Math.abs(ix * oy - iy * ox), ix * ox + iy * oy);
    if (chordDefl > Math.PI - 1e-9) defl[i] = Math.PI;
  }
  const candidates: number[] = [];
  for (let i = first; i <= last; i++) if (defl[i] >= angle || defl[i] >= Math.PI) candidates.push(i);
  candidates.sort((a, b) => defl[b] - defl[a] || a - b);
  const taken: number[] = [];
  const suppressed = new Uint8Array(n);
  for (const c of candidates) {
    if (suppressed[c]) continue;
    taken.push(c);
    // Suppress weaker candidates until the polyline leaves the circle of radius `arm`.
    for (const dir of [1, -1]) {
      for (let j = c + dir, k = 0; k < reach; j += dir, k++) {
        if (!closed && (j < 0 || j >= n)) break;
        if (Math.hypot(xs[wrap(j)] - xs[c], ys[wrap(j)] - ys[c]) >= arm) break;
        suppressed[wrap(j)] = 1;
      }
    }
  }
  return taken.sort((a, b) => a - b);
}

/** Longest walk along the polyline for one arm of the corner test. */
const MAX_ARM_VERTICES = 4096;

/** Fit the run of working vertices a..b (a and b are corners, ends, or the ring's seam). */
function fitRun(ctx: Ctx, a: number, b: number, smoothRing: boolean): Trial[] {
  const out: Trial[] = [];
  let s = a;
  let tanIn: Vector | null = null;
  let seamTan: Vector | null = null;
  let hint = 0;
  while (s < b) {
    // The last vertex this segment may reach; a smooth ring needs at least two segments so the
    // seam tangent is known before the last one.
    const limit = smoothRing && s === a ? b - 1 : b;
    const endTan = smoothRing && seamTan ? seamTan : null;
    const tryEnd = (e: number) => tryFit(ctx, s, e, tanIn, e === b ? endTan : null);
    let lo = s + 1;
    let loFit = tryEnd(lo) ?? fallback(ctx, s, lo, tanIn, lo === b ? endTan : null);
    let hi = -1;
    let e = Math.min(limit, s + Math.max(2, hint));
    while (lo < limit) {
      const t = tryEnd(e);
      if (t) {
        lo = e;
        loFit = t;
        if (e === limit) break;
        e = Math.min(limit, s + 2 * (e - s));
      } else {
        hi = e;
        break;
      }
    }
    if (hi > 0) {
      while (hi - lo > 1) {
        const mid = (lo + hi) >> 1;
        const t = tryEnd(mid);
        if (t) {
          lo = mid;
          loFit = t;
        } else hi = mid;
      }
    }
    out.push(loFit);
    hint = lo - s;
    const seg = loFit.seg;
    if (smoothRing && s === a) seamTan = unit(seg[1][0] - seg[0][0], seg[1][1] - seg[0][1]);
    tanIn = unit(seg[3][0] - seg[2][0], seg[3][1] - seg[2][1]);
    s = lo;
  }
  return out;
}

function unit(x: number, y: number): Vector | null {
  const l = Math.hypot(x, y);
  return l > 0 ? [x / l, y / l] : null;
}

/** Two-point segment that always meets the tolerance (module comment, hull argument). */
function fallback(ctx: Ctx, s: number, e: number, t1: Vector | null, t2: Vector | null): Trial {
  const { xs, ys, tol } = ctx;
  const ax = xs[s], ay = ys[s], bx = xs[e], by = ys[e];
  const chord = Math.hypot(bx - ax, by - ay);
  const d = unit(bx - ax, by - ay) ?? [1, 0];
  const d1 = t1 ?? d;
  const d2 = t2 ?? d;
  const make = (arm: number): Segment => [
    [ax, ay],
    [ax + arm * d1[0], ay + arm * d1[1]],
    [bx - arm * d2[0], by - arm * d2[1]],
    [bx, by],
  ];
  let seg = make(chord / 3);
  if (!piecesWithin(ctx, seg, s, e, [0, 1])) seg = make(Math.min(chord / 3, tol / 2));
  return { seg, maxErr: 0, sumSq: 0, s, e, u: Float64Array.of(0, 1) };
}

/**
 * Least-squares cubic over working vertices s..e with optional fixed unit tangents (t1 leaving
 * the start, t2 arriving at the end), Newton reparameterisation, and the two-sided check.
 * Returns null when the range cannot be fitted within the tolerance.
 */
function tryFit(ctx: Ctx, s: number, e: number, t1: Vector | null, t2: Vector | null): Trial | null {
  const { xs, ys, tol, u } = ctx;
  const k = e - s + 1;
  if (k === 2) {
    const f = fallback(ctx, s, e, t1, t2);
    return f;
  }
  // Chord-length parameters.
  u[0] = 0;
  for (let i = 1; i < k; i++) u[i] = u[i - 1] + Math.hypot(xs[s + i] - xs[s + i - 1], ys[s + i] - ys[s + i - 1]);
  const total = u[k - 1];
  if (!(total > 0)) return null;
  for (let i = 1; i < k; i++) u[i] /= total;
  u[k - 1] = 1;

  const maxIter = 8;
  for (let iter = 0; ; iter++) {
    const seg = leastSquares(ctx, s, e, t1, t2, total);
    // Vertex errors at current parameters.
    let maxErr = 0;
    let sumSq = 0;
    for (let i = 1; i < k - 1; i++) {
      const [bx, by] = cubicAt(seg, u[i]);
      const d2 = (bx - xs[s + i]) ** 2 + (by - ys[s + i]) ** 2;
      sumSq += d2;
      if (d2 > maxErr) maxErr = d2;
    }
    maxErr = Math.sqrt(maxErr);
    if (maxErr <= tol) {
      if (piecesWithin(ctx, seg, s, e, u)) return { seg, maxErr, sumSq, s, e, u: u.slice(0, k) };
    }
    // Reparameterise and retry while the error is within reach (Schneider's rule of thumb: a few
    // iterations help only when the error is within a small multiple of the tolerance).
    if (iter >= maxIter || maxErr > 4 * tol) return null;
    let moved = 0;
    for (let i = 1; i < k - 1; i++) {
      const nu = newton(seg, xs[s + i], ys[s + i], u[i]);
      moved = Math.max(moved, Math.abs(nu - u[i]));
      u[i] = nu;
    }
    if (moved < 1e-9) return null;
  }
}

function cubicAt(seg: Segment, t: number): [number, number] {
  const s = 1 - t;
  const a = s * s * s, b = 3 * s * s * t, c = 3 * s * t * t, d = t * t * t;
  return [
    a * seg[0][0] + b * seg[1][0] + c * seg[2][0] + d * seg[3][0],
    a * seg[0][1] + b * seg[1][1] + c * seg[2][1] + d * seg[3][1],
  ];
}

/** One Newton–Raphson step on (B(u) − P)·B′(u) = 0 (Schneider 1990), kept inside [0, 1]. */
function newton(seg: Segment, px: number, py: number, u: number): number {
  const s = 1 - u;
  const [p0, p1, p2, p3] = seg;
  const [bx, by] = cubicAt(seg, u);
  // First and second derivatives of the cubic.
  const d1x = 3 * (s * s * (p1[0] - p0[0]) + 2 * s * u * (p2[0] - p1[0]) + u * u * (p3[0] - p2[0]));
  const d1y = 3 * (s * s * (p1[1] - p0[1]) + 2 * s * u * (p2[1] - p1[1]) + u * u * (p3[1] - p2[1]));
  const d2x = 6 * (s * (p2[0] - 2 * p1[0] + p0[0]) + u * (p3[0] - 2 * p2[0] + p1[0]));
  const d2y = 6 * (s * (p2[1] - 2 * p1[1] + p0[1]) + u * (p3[1] - 2 * p2[1] + p1[1]));
  const rx = bx - px;
  const ry = by - py;
  const num = rx * d1x + ry * d1y;
  const den = d1x * d1x + d1y * d1y + rx * d2x + ry * d2y;
  if (!(den > 0) || !Number.isFinite(num)) return u;
  const nu = u - num / den;
  return nu < 0 ? 0 : nu > 1 ? 1 : nu;
}

/**
 * Least squares for the inner control points. Unknowns: the arm length along a fixed tangent, or
 * both coordinates of a free inner control point; the end points are fixed.
 */
function leastSquares(ctx: Ctx, s: number, e: number, t1: Vector | null, t2: Vector | null, pathLen: number): Segment {
  const { xs, ys, u } = ctx;
  const k = e - s + 1;
  const p0x = xs[s], p0y = ys[s], p3x = xs[e], p3y = ys[e];
  // Columns: for each unknown z_j, its direction when it multiplies b1 (ctrl1) and b2 (ctrl2).
  const c1: number[][] = []; // [ax, ay] per column for ctrl1
  const c2: number[][] = [];
  if (t1) {
    c1.push([t1[0], t1[1]]);
    c2.push([0, 0]);
  } else {
    c1.push([1, 0], [0, 1]);
    c2.push([0, 0], [0, 0]);
  }
  if (t2) {
    c1.push([0, 0]);
    c2.push([-t2[0], -t2[1]]);
  } else {
    c1.push([0, 0], [0, 0]);
    c2.push([1, 0], [0, 1]);
  }
  const m = c1.length;
  const M = new Float64Array(m * m);
  const r = new Float64Array(m);
  const v = new Float64Array(2 * m);
  for (let i = 0; i < k; i++) {
    const t = u[i];
    const sv = 1 - t;
    const b0 = sv * sv * sv, b1 = 3 * sv * sv * t, b2 = 3 * sv * t * t, b3 = t * t * t;
    const w0 = b0 + (t1 ? b1 : 0);
    const w3 = b3 + (t2 ? b2 : 0);
    const rx = xs[s + i] - (w0 * p0x + w3 * p3x);
    const ry = ys[s + i] - (w0 * p0y + w3 * p3y);
    for (let j = 0; j < m; j++) {
      v[2 * j] = b1 * c1[j][0] + b2 * c2[j][0];
      v[2 * j + 1] = b1 * c1[j][1] + b2 * c2[j][1];
    }
    for (let j = 0; j < m; j++) {
      r[j] += v[2 * j] * rx + v[2 * j + 1] * ry;
      for (let l = j; l < m; l++) M[j * m + l] += v[2 * j] * v[2 * l] + v[2 * j + 1] * v[2 * l + 1];
    }
  }
  for (let j = 0; j < m; j++) for (let l = 0; l < j; l++) M[j * m + l] = M[l * m + j];
  const z = solve(M, r, m);
  const chord = Math.hypot(p3x - p0x, p3y - p0y);
  const scale = Math.max(chord, pathLen * 1e-3);
  const dir = unit(p3x - p0x, p3y - p0y) ?? [1, 0];
  let q1x: number, q1y: number, q2x: number, q2y: number;
  let j = 0;
  const heur = scale / 3;
  if (t1) {
    let a = z ? z[j] : NaN;
    if (!(a > 1e-6 * scale) || a > 10 * pathLen) a = heur;
    q1x = p0x + a * t1[0];
    q1y = p0y + a * t1[1];
    j += 1;
  } else {
    q1x = z ? z[j] : NaN;
    q1y = z ? z[j + 1] : NaN;
    if (!Number.isFinite(q1x) || !Number.isFinite(q1y) || Math.hypot(q1x - p0x, q1y - p0y) <= 1e-6 * scale) {
      q1x = p0x + heur * dir[0];
      q1y = p0y + heur * dir[1];
    }
    j += 2;
  }
  if (t2) {
    let a = z ? z[j] : NaN;
    if (!(a > 1e-6 * scale) || a > 10 * pathLen) a = heur;
    q2x = p3x - a * t2[0];
    q2y = p3y - a * t2[1];
  } else {
    q2x = z ? z[j] : NaN;
    q2y = z ? z[j + 1] : NaN;
    if (!Number.isFinite(q2x) || !Number.isFinite(q2y) || Math.hypot(q2x - p3x, q2y - p3y) <= 1e-6 * scale) {
      q2x = p3x - heur * dir[0];
      q2y = p3y - heur * dir[1];
    }
  }
  return [
    [p0x, p0y],
    [q1x, q1y],
    [q2x, q2y],
    [p3x, p3y],
  ];
}

/** Gaussian elimination with partial pivoting; null when (numerically) singular. */
function solve(M: Float64Array, r: Float64Array, m: number): number[] | null {
  const a = Array.from({ length: m }, (_, i) => [...M.subarray(i * m, i * m + m), r[i]]);
  let norm = 0;
  for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) norm = Math.max(norm, Math.abs(a[i][j]));
  if (!(norm > 0)) return null;
  for (let c = 0; c < m; c++) {
    let p = c;
    for (let i = c + 1; i < m; i++) if (Math.abs(a[i][c]) > Math.abs(a[p][c])) p = i;
    if (Math.abs(a[p][c]) <= 1e-12 * norm) return null;
    [a[c], a[p]] = [a[p], a[c]];
    for (let i = c + 1; i < m; i++) {
      const f = a[i][c] / a[c][c];
      for (let j = c; j <= m; j++) a[i][j] -= f * a[c][j];
    }
  }
  const z = new Array<number>(m);
  for (let i = m - 1; i >= 0; i--) {
    let sum = a[i][m];
    for (let j = i + 1; j < m; j++) sum -= a[i][j] * z[j];
    z[i] = sum / a[i][i];
  }
  return z;
}

// --- The two-sided check: each curve piece against its own edge, by the convex hull property.

function edgeDist(px: number, py: number, ax: number, ay: number, dx: number, dy: number, len2: number): number {
  let t = len2 > 0 ? ((px - ax) * dx + (py - ay) * dy) / len2 : 0;
  if (t < 0) t = 0;
  else if (t > 1) t = 1;
  return Math.hypot(px - (ax + t * dx), py - (ay + t * dy));
}

/** Control points of the cubic's piece over [a, b], written into out (8 numbers). */
function cubicPiece(seg: Segment, a: number, b: number, out: Float64Array): void {
  // Blossoming: the piece's control points are the blossom values f(a,a,a), f(a,a,b), f(a,b,b), f(b,b,b).
  const x0 = seg[0][0], x1 = seg[1][0], x2 = seg[2][0], x3 = seg[3][0];
  const y0 = seg[0][1], y1 = seg[1][1], y2 = seg[2][1], y3 = seg[3][1];
  const blossom = (t1: number, t2: number, t3: number, o: number) => {
    // de Casteljau with a different parameter at each level.
    const s1 = 1 - t1, s2 = 1 - t2, s3 = 1 - t3;
    let ax = s1 * x0 + t1 * x1, bx = s1 * x1 + t1 * x2, cx = s1 * x2 + t1 * x3;
    let ay = s1 * y0 + t1 * y1, by = s1 * y1 + t1 * y2, cy = s1 * y2 + t1 * y3;
    ax = s2 * ax + t2 * bx;
    bx = s2 * bx + t2 * cx;
    ay = s2 * ay + t2 * by;
    by = s2 * by + t2 * cy;
    out[o] = s3 * ax + t3 * bx;
    out[o + 1] = s3 * ay + t3 * by;
  };
  blossom(a, a, a, 0);
  blossom(a, a, b, 2);
  blossom(a, b, b, 4);
  blossom(b, b, b, 6);
}

const pieceBuf = new Float64Array(8);

/**
 * Whether the cubic's piece over [a, b] stays within tol of the edge A→B: proven when all four
 * control points of the piece are (convexity), refuted when a curve point is not.
 */
function pieceWithinEdge(seg: Segment, a: number, b: number, ax: number, ay: number, bx: number, by: number, tol: number, depth: number): boolean {
  const dx = bx - ax, dy = by - ay;
  const len2 = dx * dx + dy * dy;
  cubicPiece(seg, a, b, pieceBuf);
  let worst = 0;
  for (let j = 0; j < 4; j++) {
    const d = edgeDist(pieceBuf[2 * j], pieceBuf[2 * j + 1], ax, ay, dx, dy, len2);
    if (d > worst) worst = d;
  }
  if (worst <= tol) return true;
  // The piece's end points are curve points: a refutation if either is out.
  if (edgeDist(pieceBuf[0], pieceBuf[1], ax, ay, dx, dy, len2) > tol) return false;
  if (edgeDist(pieceBuf[6], pieceBuf[7], ax, ay, dx, dy, len2) > tol) return false;
  if (depth >= 24 || b - a < 1e-12) return false; // unresolved this close to the bound: refuse
  const m = 0.5 * (a + b);
  return pieceWithinEdge(seg, a, m, ax, ay, bx, by, tol, depth + 1) && pieceWithinEdge(seg, m, b, ax, ay, bx, by, tol, depth + 1);
}

function piecesWithin(ctx: Ctx, seg: Segment, s: number, e: number, u: ArrayLike<number>): boolean {
  const { xs, ys, tol } = ctx;
  for (let i = s; i < e; i++) {
    let a = u[i - s];
    let b = u[i - s + 1];
    if (a > b) [a, b] = [b, a];
    if (!pieceWithinEdge(seg, a, b, xs[i], ys[i], xs[i + 1], ys[i + 1], tol, 0)) return false;
  }
  return true;
}

/** Upper bound of the largest distance between a segment and its range, for the report. */
function maxPieceDeviation(ctx: Ctx, t: Trial): number {
  const { xs, ys } = ctx;
  let worst = 0;
  for (let i = t.s; i < t.e; i++) {
    let a = t.u[i - t.s];
    let b = t.u[i - t.s + 1];
    if (a > b) [a, b] = [b, a];
    worst = Math.max(worst, pieceMax(t.seg, a, b, xs[i], ys[i], xs[i + 1], ys[i + 1]));
  }
  return Math.max(worst, t.maxErr);
}

/** Largest distance of the piece over [a, b] to the edge, to within 0.1 % (branch and bound). */
function pieceMax(seg: Segment, a: number, b: number, ax: number, ay: number, bx: number, by: number): number {
  const dx = bx - ax, dy = by - ay;
  const len2 = dx * dx + dy * dy;
  const buf = new Float64Array(8);
  let lower = 0;
  const stack: [number, number][] = [[a, b]];
  let guard = 0;
  let upperLeft = 0;
  while (stack.length && guard++ < 4000) {
    const [p, q] = stack.pop()!;
    cubicPiece(seg, p, q, buf);
    let ub = 0;
    for (let j = 0; j < 4; j++) ub = Math.max(ub, edgeDist(buf[2 * j], buf[2 * j + 1], ax, ay, dx, dy, len2));
    lower = Math.max(lower, edgeDist(buf[0], buf[1], ax, ay, dx, dy, len2), edgeDist(buf[6], buf[7], ax, ay, dx, dy, len2));
    if (ub <= lower * 1.001 + 1e-12) continue;
    if (q - p < 1e-9) {
      upperLeft = Math.max(upperLeft, ub);
      continue;
    }
    const m = 0.5 * (p + q);
    stack.push([p, m], [m, q]);
  }
  for (const [p, q] of stack) {
    cubicPiece(seg, p, q, buf);
    for (let j = 0; j < 4; j++) upperLeft = Math.max(upperLeft, edgeDist(buf[2 * j], buf[2 * j + 1], ax, ay, dx, dy, len2));
  }
  return Math.max(lower * 1.001, upperLeft);
}

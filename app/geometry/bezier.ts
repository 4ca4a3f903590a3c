/**
 * Bézier segments of any degree: evaluation, derivatives, subdivision, bounds, arc length,
 * curvature. Methods are the textbook ones (Farin, *Curves and Surfaces for CAGD*, 5th ed.,
 * ch. 3–5: de Casteljau's algorithm, the Bernstein form, derivatives as hodographs).
 */
import { bernsteinRoots, bernsteinWeights } from "./bernstein";
import type { Box, Point, Segment, Vector } from "./types";

export function degree(seg: Segment): number {
  return seg.length - 1;
}

/** Point at t by de Casteljau's algorithm (numerically stable for every degree). */
export function evaluate(seg: Segment, t: number): Point {
  const n = seg.length - 1;
  if (n === 3) {
    const s = 1 - t;
    const a = s * s * s;
    const b = 3 * s * s * t;
    const c = 3 * s * t * t;
    const d = t * t * t;
    return [
      a * seg[0][0] + b * seg[1][0] + c * seg[2][0] + d * seg[3][0],
      a * seg[0][1] + b * seg[1][1] + c * seg[2][1] + d * seg[3][1],
    ];
  }
  if (n === 0) return [seg[0][0], seg[0][1]];
  const xs = seg.map((p) => p[0]);
  const ys = seg.map((p) => p[1]);
  const s = 1 - t;
  for (let r = 1; r <= n; r++) {
    for (let i = 0; i <= n - r; i++) {
      xs[i] = s * xs[i] + t * xs[i + 1];
      ys[i] = s * ys[i] + t * ys[i + 1];
    }
  }
  return [xs[0], ys[0]];
}

/** Point at t from the Bernstein form Σ B_{i,n}(t) P_i. */
export function evaluateBernstein(seg: Segment, t: number): Point {
  const w = bernsteinWeights(seg.length - 1, t);
  let x = 0;
  let y = 0;
  for (let i = 0; i < seg.length; i++) {
    x += w[i] * seg[i][0];
    y += w[i] * seg[i][1];
  }
  return [x, y];
}

/** Control points of the derivative curve (hodograph): n (P_{i+1} − P_i), degree n − 1. */
export function hodograph(seg: Segment): Segment {
  const n = seg.length - 1;
  if (n === 0) return [[0, 0]];
  const out: Segment = [];
  for (let i = 0; i < n; i++) out.push([n * (seg[i + 1][0] - seg[i][0]), n * (seg[i + 1][1] - seg[i][1])]);
  return out;
}

/** The k-th derivative vector at t (k ≥ 1); zero beyond the degree. */
export function derivative(seg: Segment, t: number, k = 1): Vector {
  let h = seg;
  for (let i = 0; i < k; i++) {
    if (h.length === 1) return [0, 0];
    h = hodograph(h);
  }
  return evaluate(h, t);
}

/** Split at t into the segments over [0, t] and [t, 1] (de Casteljau). */
export function split(seg: Segment, t: number): [Segment, Segment] {
  const n = seg.length - 1;
  const xs = seg.map((p) => p[0]);
  const ys = seg.map((p) => p[1]);
  const left: Segment = new Array(n + 1);
  const right: Segment = new Array(n + 1);
  left[0] = [xs[0], ys[0]];
  right[n] = [xs[n], ys[n]];
  const s = 1 - t;
  for (let r = 1; r <= n; r++) {
    for (let i = 0; i <= n - r; i++) {
      xs[i] = s * xs[i] + t * xs[i + 1];
      ys[i] = s * ys[i] + t * ys[i + 1];
    }
    left[r] = [xs[0], ys[0]];
    right[n - r] = [xs[n - r], ys[n - r]];
  }
  return [left, right];
}

/** The piece over [t0, t1] as a segment of the same degree (t0 > t1 gives it reversed). */
export function subSegment(seg: Segment, t0: number, t1: number): Segment {
  if (t0 > t1) return subSegment(seg, t1, t0).reverse();
  if (t0 <= 0 && t1 >= 1) return seg.map((p) => [p[0], p[1]] as Point);
  if (t1 >= 1) return split(seg, t0)[1];
  const left = split(seg, t1)[0];
  if (t0 <= 0) return left;
  return split(left, t0 / t1)[1];
}

/** Box of the control points (contains the curve; convex hull property). */
export function controlBox(seg: Segment): Box {
  let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  for (const p of seg) {
    if (p[0] < x0) x0 = p[0];
    if (p[0] > x1) x1 = p[0];
    if (p[1] < y0) y0 = p[1];
    if (p[1] > y1) y1 = p[1];
  }
  return [x0, y0, x1, y1];
}

/**
 * Tight bounding box: the end points plus the points where dx/dt or dy/dt vanish (roots of the
 * hodograph's components, found on the Bernstein form).
 */
export function boundingBox(seg: Segment): Box {
  const n = seg.length - 1;
  const ts = [0, 1];
  if (n >= 2) {
    const h = hodograph(seg);
    ts.push(...bernsteinRoots(h.map((p) => p[0])));
    ts.push(...bernsteinRoots(h.map((p) => p[1])));
  }
  let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  for (const t of ts) {
    const p = evaluate(seg, t);
    if (p[0] < x0) x0 = p[0];
    if (p[0] > x1) x1 = p[0];
    if (p[1] < y0) y0 = p[1];
    if (p[1] > y1) y1 = p[1];
  }
  return [x0, y0, x1, y1];
}

// Gauss–Legendre nodes and weights on [−1, 1], computed once by Newton's method on the Legendre
// polynomial P_m (Abramowitz & Stegun 25.4.29 for the rule; the initial guess cos(π(i − ¼)/(m + ½))
// is the classical one from Numerical Recipes, §4.6).
const glCache = new Map<number, { x: number[]; w: number[] }>();
export function gaussLegendre(m: number): { x: number[]; w: number[] } {
  const hit = glCache.get(m);
  if (hit) return hit;
  const x = new Array<number>(m);
  const w = new Array<number>(m);
  for (let i = 1; i <= Math.ceil(m / 2); i++) {
    let z = Math.cos((Math.PI * (i - 0.25)) / (m + 0.5));
    let dp = 0;
    for (let it = 0; it < 100; it++) {
      let p0 = 1;
      let p1 = z;
      for (let k = 2; k <= m; k++) {
        const p2 = ((2 * k - 1) * z * p1 - (k - 1) * p0) / k;
        p0 = p1;
        p1 = p2;
      }
      // p1 = P_m(z), p0 = P_{m−1}(z)
      dp = (m * (z * p1 - p0)) / (z * z - 1);
      const dz = p1 / dp;
      z -= dz;
      if (Math.abs(dz) < 1e-16) break;
    }
    x[i - 1] = -z;
    x[m - i] = z;
    w[i - 1] = w[m - i] = 2 / ((1 - z * z) * dp * dp);
  }
  const rule = { x, w };
  glCache.set(m, rule);
  return rule;
}

function speedIntegral(h: Segment, a: number, b: number, m: number): number {
  const { x, w } = gaussLegendre(m);
  const half = 0.5 * (b - a);
  const mid = 0.5 * (a + b);
  let sum = 0;
  for (let i = 0; i < m; i++) {
    const d = evaluate(h, mid + half * x[i]);
    sum += w[i] * Math.hypot(d[0], d[1]);
  }
  return sum * half;
}

/**
 * Arc length by Gauss–Legendre quadrature of the speed |B′(t)|, adaptively: an interval is
 * accepted when its 8-point and 16-point rules agree within its share of `accuracy`, otherwise
 * it is halved. The speed is smooth except where it vanishes (cusps), where halving takes over.
 * `accuracy` is an absolute length; the answer is within it in all but contrived cases.
 */
export function arcLength(seg: Segment, accuracy = 1e-9, t0 = 0, t1 = 1): number {
  if (seg.length < 2) return 0;
  const h = hodograph(seg);
  const rec = (a: number, b: number, acc: number, depth: number): number => {
    const coarse = speedIntegral(h, a, b, 8);
    const fine = speedIntegral(h, a, b, 16);
    if (Math.abs(fine - coarse) <= acc || depth >= 30) return fine;
    const m = 0.5 * (a + b);
    return rec(a, m, acc / 2, depth + 1) + rec(m, b, acc / 2, depth + 1);
  };
  return rec(t0, t1, Math.max(accuracy, 0), 0);
}

/**
 * Signed curvature at t: (x′y″ − y′x″) / |B′|³, positive when turning left.
 * Where B′ = 0 the curve has a cusp or a stationary parameter: the value is the limit along the
 * curve when that is finite and ±Infinity otherwise; a segment collapsed to a point gives 0.
 */
export function curvature(seg: Segment, t: number): number {
  const d1 = derivative(seg, t, 1);
  const d2 = derivative(seg, t, 2);
  const speed = Math.hypot(d1[0], d1[1]);
  const scale = Math.max(1e-300, ...seg.map((p) => Math.hypot(p[0] - seg[0][0], p[1] - seg[0][1])));
  if (speed > 1e-12 * scale) return (d1[0] * d2[1] - d1[1] * d2[0]) / (speed * speed * speed);
  // Stationary point: approach it from inside the segment.
  const eps = 1e-7;
  const tt = t < 0.5 ? t + eps : t - eps;
  const e1 = derivative(seg, tt, 1);
  const e2 = derivative(seg, tt, 2);
  const sp = Math.hypot(e1[0], e1[1]);
  if (sp <= 1e-14 * scale) return 0;
  const k = (e1[0] * e2[1] - e1[1] * e2[0]) / (sp * sp * sp);
  return Math.abs(k) > 1e6 / scale ? Math.sign(k) * Infinity : k;
}

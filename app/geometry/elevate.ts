/**
 * Degree elevation (exact) and degree reduction (least squares, with an error bound).
 *
 * Elevation from n to n + 1: Q_i = (i/(n+1)) P_{i−1} + (1 − i/(n+1)) P_i (Farin, *Curves and
 * Surfaces for CAGD*, 5th ed., §5.1); from n to any m > n directly:
 * Q_j = Σ_i C(n,i) C(m−n, j−i) / C(m, j) · P_i (the same book, the repeated-elevation closed form).
 */
import { binomial, pascalRow } from "./bernstein";
import type { Point, Segment } from "./types";

export function elevate(seg: Segment, m: number): Segment {
  const n = seg.length - 1;
  if (!Number.isInteger(m) || m < n) throw new RangeError(`elevate: target degree ${m} is below the segment's degree ${n}`);
  if (m === n) return seg.map((p) => [p[0], p[1]] as Point);
  const cm = pascalRow(m);
  const out: Segment = [];
  for (let j = 0; j <= m; j++) {
    let x = 0;
    let y = 0;
    const lo = Math.max(0, j - (m - n));
    const hi = Math.min(n, j);
    for (let i = lo; i <= hi; i++) {
      const w = (binomial(n, i) * binomial(m - n, j - i)) / cm[j];
      x += w * seg[i][0];
      y += w * seg[i][1];
    }
    out.push([x, y]);
  }
  // End points are exactly the originals.
  out[0] = [seg[0][0], seg[0][1]];
  out[m] = [seg[n][0], seg[n][1]];
  return out;
}

export interface Reduction {
  segment: Segment;
  /**
   * Upper bound of max_t |B(t) − R(t)| (parametric distance, which bounds the Hausdorff distance):
   * the largest control-point difference after elevating R back to the original degree (convex
   * hull property of the difference curve).
   */
  errorBound: number;
}

/**
 * Least-squares degree reduction from n to m < n with the end points kept: minimises
 * ∫₀¹ |B(t) − R(t)|² dt over the inner control points of R, using the Gram matrix of the
 * Bernstein basis, ∫ B_{i,p} B_{j,q} = C(p,i) C(q,j) / ((p+q+1) C(p+q, i+j)) (Farin, §5.8 on
 * products and integrals of Bernstein polynomials). Piegl & Tiller (*The NURBS Book*, A5.11)
 * reduce one degree at a time with a bound; this solves the continuous least squares directly
 * for any target degree and reports a rigorous bound.
 */
export function reduce(seg: Segment, m: number): Reduction {
  const n = seg.length - 1;
  if (!Number.isInteger(m) || m < 1 || m >= n) throw new RangeError(`reduce: target degree ${m} must be within 1..${n - 1}`);
  const gram = (p: number, i: number, q: number, j: number) =>
    (binomial(p, i) * binomial(q, j)) / ((p + q + 1) * binomial(p + q, i + j));
  const inner = m - 1; // unknown control points R_1..R_{m−1}
  const P0 = seg[0];
  const Pn = seg[n];
  const R: Point[] = [[P0[0], P0[1]]];
  if (inner > 0) {
    const A = Array.from({ length: inner }, () => new Array<number>(inner).fill(0));
    const bx = new Array<number>(inner).fill(0);
    const by = new Array<number>(inner).fill(0);
    for (let a = 0; a < inner; a++) {
      const i = a + 1;
      for (let b = 0; b < inner; b++) A[a][b] = gram(m, i, m, b + 1);
      let sx = 0;
      let sy = 0;
      for (let k = 0; k <= n; k++) {
        const g = gram(m, i, n, k);
        sx += g * seg[k][0];
        sy += g * seg[k][1];
      }
      const g0 = gram(m, i, m, 0);
      const gm = gram(m, i, m, m);
      bx[a] = sx - g0 * P0[0] - gm * Pn[0];
      by[a] = sy - g0 * P0[1] - gm * Pn[1];
    }
    const zx = solveDense(A.map((r) => [...r]), bx);
    const zy = solveDense(A.map((r) => [...r]), by);
    for (let a = 0; a < inner; a++) R.push([zx[a], zy[a]]);
  }
  R.push([Pn[0], Pn[1]]);
  const back = elevate(R, n);
  let bound = 0;
  for (let i = 0; i <= n; i++) bound = Math.max(bound, Math.hypot(back[i][0] - seg[i][0], back[i][1] - seg[i][1]));
  return { segment: R, errorBound: bound };
}

function solveDense(A: number[][], b: number[]): number[] {
  const n = b.length;
  const M = A.map((r, i) => [...r, b[i]]);
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let i = c + 1; i < n; i++) if (Math.abs(M[i][c]) > Math.abs(M[p][c])) p = i;
    [M[c], M[p]] = [M[p], M[c]];
    for (let i = c + 1; i < n; i++) {
      const f = M[i][c] / M[c][c];
      for (let j = c; j <= n; j++) M[i][j] -= f * M[c][j];
    }
  }
  const x = new Array<number>(n);
  for (let i = n - 1; i >= 0; i--) {
    let s = M[i][n];
    for (let j = i + 1; j < n; j++) s -= M[i][j] * x[j];
    x[i] = s / M[i][i];
  }
  return x;
}

/** Make a segment exactly degree m: elevate when below, reduce (with bound) when above. */
export function toDegree(seg: Segment, m: number): Reduction {
  const n = seg.length - 1;
  if (m >= n) return { segment: elevate(seg, m), errorBound: 0 };
  return reduce(seg, m);
}

/**
 * Bernstein basis polynomials and binomial coefficients.
 *
 * B_{i,n}(t) = C(n, i) tⁱ (1 − t)ⁿ⁻ⁱ, with C(n, i) taken from Pascal's triangle (each entry the sum
 * of the two above it), which stays exact in floating point up to n = 1029 for the row values
 * that fit in a double and is exact as integers up to n = 56 (common practice).
 */

const rows: number[][] = [[1]];

/** Row n of Pascal's triangle: [C(n,0), …, C(n,n)]. Cached; do not mutate the result. */
export function pascalRow(n: number): readonly number[] {
  if (!Number.isInteger(n) || n < 0) throw new RangeError(`pascalRow: n must be a non-negative integer, got ${n}`);
  while (rows.length <= n) {
    const prev = rows[rows.length - 1];
    const next = new Array<number>(prev.length + 1);
    next[0] = 1;
    next[prev.length] = 1;
    for (let i = 1; i < prev.length; i++) next[i] = prev[i - 1] + prev[i];
    rows.push(next);
  }
  return rows[n];
}

/** Binomial coefficient C(n, k); 0 outside 0 ≤ k ≤ n. */
export function binomial(n: number, k: number): number {
  if (k < 0 || k > n) return 0;
  return pascalRow(n)[k];
}

/** The n + 1 Bernstein weights of degree n at t; they sum to 1 (partition of unity). */
export function bernsteinWeights(n: number, t: number): number[] {
  const row = pascalRow(n);
  const s = 1 - t;
  const out = new Array<number>(n + 1);
  // tⁱ and (1 − t)ⁿ⁻ⁱ built by repeated products, no Math.pow (exact at t = 0 and t = 1).
  const tp = new Array<number>(n + 1);
  const sp = new Array<number>(n + 1);
  tp[0] = 1;
  sp[0] = 1;
  for (let i = 1; i <= n; i++) {
    tp[i] = tp[i - 1] * t;
    sp[i] = sp[i - 1] * s;
  }
  for (let i = 0; i <= n; i++) out[i] = row[i] * tp[i] * sp[n - i];
  return out;
}

/** Value at t of the scalar polynomial with Bernstein coefficients `coeffs` (de Casteljau). */
export function bernsteinValue(coeffs: ArrayLike<number>, t: number): number {
  const n = coeffs.length - 1;
  if (n < 0) return 0;
  const b = Array.from(coeffs);
  const s = 1 - t;
  for (let r = 1; r <= n; r++) for (let i = 0; i <= n - r; i++) b[i] = s * b[i] + t * b[i + 1];
  return b[0];
}

/** Split a scalar Bernstein polynomial at t into the coefficients over [0, t] and [t, 1]. */
export function bernsteinSplit(coeffs: ArrayLike<number>, t: number): [number[], number[]] {
  const n = coeffs.length - 1;
  const b = Array.from(coeffs);
  const left = new Array<number>(n + 1);
  const right = new Array<number>(n + 1);
  const s = 1 - t;
  left[0] = b[0];
  right[n] = b[n];
  for (let r = 1; r <= n; r++) {
    for (let i = 0; i <= n - r; i++) b[i] = s * b[i] + t * b[i + 1];
    left[r] = b[0];
    right[n - r] = b[n - r];
  }
  return [left, right];
}

/**
 * Maximum of |p(t)| over [0, 1] for a Bernstein polynomial, to within `accuracy`.
 * Branch and bound: the coefficients of a piece bound its values (convex hull property), the
 * end coefficients are exact values; refine the piece whose bound is highest.
 * Returns the best value found (a lower bound) and where.
 */
export function bernsteinMaxAbs(coeffs: ArrayLike<number>, accuracy: number): { value: number; t: number } {
  const n = coeffs.length - 1;
  if (n < 0) return { value: 0, t: 0 };
  const c0 = Array.from(coeffs);
  let best = Math.abs(c0[0]);
  let bestT = 0;
  if (Math.abs(c0[n]) > best) {
    best = Math.abs(c0[n]);
    bestT = 1;
  }
  type Piece = { c: number[]; a: number; b: number; ub: number };
  const bound = (c: number[]) => {
    let m = 0;
    for (const v of c) m = Math.max(m, Math.abs(v));
    return m;
  };
  const stack: Piece[] = [{ c: c0, a: 0, b: 1, ub: bound(c0) }];
  let guard = 0;
  while (stack.length > 0 && guard++ < 20000) {
    const p = stack.pop()!;
    if (p.ub <= best + accuracy) continue;
    const mid = 0.5 * (p.a + p.b);
    const [l, r] = bernsteinSplit(p.c, 0.5);
    const vm = Math.abs(l[n]);
    if (vm > best) {
      best = vm;
      bestT = mid;
    }
    if (p.b - p.a < 1e-15) continue;
    const ubl = bound(l);
    const ubr = bound(r);
    if (ubl > best + accuracy) stack.push({ c: l, a: p.a, b: mid, ub: ubl });
    if (ubr > best + accuracy) stack.push({ c: r, a: mid, b: p.b, ub: ubr });
  }
  return { value: best, t: bestT };
}

/**
 * Real roots in [0, 1] of a scalar Bernstein polynomial, by recursive subdivision: a piece whose
 * coefficients all have one strict sign has no root (convex hull property); a piece whose
 * coefficient signs change once is solved by safeguarded bisection on its values.
 * Roots of even multiplicity that do not change sign may be missed unless a coefficient hits 0.
 */
export function bernsteinRoots(coeffs: ArrayLike<number>, accuracy = 1e-13): number[] {
  const out: number[] = [];
  const n = coeffs.length - 1;
  if (n < 1) return out;
  const rec = (c: number[], a: number, b: number, depth: number) => {
    let changes = 0;
    let allZero = true;
    for (let i = 0; i <= n; i++) {
      if (c[i] !== 0) allZero = false;
      if (i > 0 && (c[i - 1] < 0) !== (c[i] < 0) && !(c[i - 1] === 0 && c[i] === 0)) changes++;
    }
    if (allZero) return; // identically zero on this piece: no isolated roots
    if (changes === 0) {
      if (c[0] === 0) out.push(a);
      return;
    }
    if (changes === 1 && (c[0] < 0) !== (c[n] < 0) && c[0] !== 0 && c[n] !== 0) {
      // One sign change and opposite end values: exactly one root; bisect on values.
      let lo = 0;
      let hi = 1;
      const flo = c[0];
      for (let k = 0; k < 80 && (hi - lo) * (b - a) > accuracy; k++) {
        const m = 0.5 * (lo + hi);
        const fm = bernsteinValue(c, m);
        if (fm === 0) {
          lo = hi = m;
          break;
        }
        if ((fm < 0) === (flo < 0)) lo = m;
        else hi = m;
      }
      out.push(a + 0.5 * (lo + hi) * (b - a));
      return;
    }
    if (b - a <= accuracy || depth > 60) {
      out.push(0.5 * (a + b));
      return;
    }
    const [l, r] = bernsteinSplit(c, 0.5);
    const m = 0.5 * (a + b);
    rec(l, a, m, depth + 1);
    rec(r, m, b, depth + 1);
  };
  rec(Array.from(coeffs), 0, 1, 0);
  out.sort((x, y) => x - y);
  // Merge duplicates found at piece borders.
  const merged: number[] = [];
  for (const r of out) if (merged.length === 0 || r - merged[merged.length - 1] > accuracy * 10) merged.push(r);
  return merged;
}

/** Coefficients of the product of two Bernstein polynomials (degrees n and m → n + m). */
export function bernsteinProduct(a: ArrayLike<number>, b: ArrayLike<number>): number[] {
  const n = a.length - 1;
  const m = b.length - 1;
  const rn = pascalRow(n);
  const rm = pascalRow(m);
  const rnm = pascalRow(n + m);
  const out = new Array<number>(n + m + 1).fill(0);
  for (let i = 0; i <= n; i++) for (let j = 0; j <= m; j++) out[i + j] += rn[i] * rm[j] * a[i] * b[j];
  for (let k = 0; k <= n + m; k++) out[k] /= rnm[k];
  return out;
}

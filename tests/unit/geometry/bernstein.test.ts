import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { bernsteinMaxAbs, bernsteinRoots, bernsteinSplit, bernsteinValue, bernsteinWeights, binomial, pascalRow } from "../../../app/geometry/bernstein";

describe("binomial coefficients", () => {
  it("equal Pascal's triangle rows (textbook rows; C(n,k) = n!/(k!(n−k)!) with exact integers)", () => {
    // Rows 0–6 of Pascal's triangle, as printed in any algebra textbook (common practice).
    expect(pascalRow(0)).toEqual([1]);
    expect(pascalRow(4)).toEqual([1, 4, 6, 4, 1]);
    expect(pascalRow(6)).toEqual([1, 6, 15, 20, 15, 6, 1]);
    const fact = (n: number): bigint => (n <= 1 ? 1n : BigInt(n) * fact(n - 1));
    for (let n = 0; n <= 50; n++)
      for (let k = 0; k <= n; k++) expect(BigInt(binomial(n, k))).toBe(fact(n) / (fact(k) * fact(n - k)));
    expect(binomial(5, -1)).toBe(0);
    expect(binomial(5, 6)).toBe(0);
  });
});

describe("Bernstein weights", () => {
  it("form a partition of unity and are non-negative on [0, 1] (Farin, CAGD, §5.1)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 30 }), fc.double({ min: 0, max: 1, noNaN: true }), (n, t) => {
        const w = bernsteinWeights(n, t);
        expect(w.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
        for (const v of w) expect(v).toBeGreaterThanOrEqual(0);
      }),
    );
  });

  it("for a cubic, the inner weights peak at t = 1/3 and t = 2/3 (common textbook fact: B_{i,n} peaks at i/n)", () => {
    const argmax = (i: number) => {
      let best = -1;
      let bestT = 0;
      for (let k = 0; k <= 300000; k++) {
        const t = k / 300000;
        const v = bernsteinWeights(3, t)[i];
        if (v > best) {
          best = v;
          bestT = t;
        }
      }
      return { bestT, best };
    };
    const b1 = argmax(1);
    const b2 = argmax(2);
    expect(b1.bestT).toBeCloseTo(1 / 3, 5);
    expect(b2.bestT).toBeCloseTo(2 / 3, 5);
    // Peak value 3 · (1/3) · (2/3)² = 4/9.
    expect(b1.best).toBeCloseTo(4 / 9, 10);
    expect(b2.best).toBeCloseTo(4 / 9, 10);
  });

  it("de Casteljau value equals the Bernstein sum, and splitting preserves the polynomial", () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: -100, max: 100, noNaN: true }), { minLength: 1, maxLength: 12 }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0.01, max: 0.99, noNaN: true }), (c, t, s) => {
        const w = bernsteinWeights(c.length - 1, t);
        const direct = c.reduce((a, v, i) => a + v * w[i], 0);
        expect(bernsteinValue(c, t)).toBeCloseTo(direct, 9);
        const [l, r] = bernsteinSplit(c, s);
        expect(bernsteinValue(l, t)).toBeCloseTo(bernsteinValue(c, t * s), 9);
        expect(bernsteinValue(r, t)).toBeCloseTo(bernsteinValue(c, s + t * (1 - s)), 9);
      }),
    );
  });

  it("roots and maximum of a known polynomial: (t − 0.2)(t − 0.7) on [0, 1]", () => {
    // Power form t² − 0.9 t + 0.14 → Bernstein coefficients [0.14, 0.14 − 0.45, 0.14 − 0.9 + 1].
    const c = [0.14, 0.14 - 0.45, 0.24];
    const roots = bernsteinRoots(c);
    expect(roots).toHaveLength(2);
    expect(roots[0]).toBeCloseTo(0.2, 12);
    expect(roots[1]).toBeCloseTo(0.7, 12);
    // |p| is largest at t = 1 (0.24) versus the dip at t = 0.45 (0.0625).
    const m = bernsteinMaxAbs(c, 1e-12);
    expect(m.value).toBeCloseTo(0.24, 12);
    expect(m.t).toBe(1);
    const m2 = bernsteinMaxAbs([0, -0.5, 0], 1e-12); // −t(1 − t): max 0.25 at 0.5
    expect(m2.value).toBeCloseTo(0.25, 11);
  });
});

import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { evaluate } from "../../../app/geometry/bezier";
import { discretisePath, discretiseSegment, wangSegmentCount } from "../../../app/geometry/discretise";
import { elevate, reduce } from "../../../app/geometry/elevate";
import { hausdorff } from "../../../app/geometry/measure";
import type { Point, Segment } from "../../../app/geometry/types";

const c = fc.noBias(fc.integer({ min: -1_000_000, max: 1_000_000 })).map((v) => v / 1000);
const point = fc.tuple(c, c) as fc.Arbitrary<Point>;
const segment = (min: number, max: number) => fc.array(point, { minLength: min + 1, maxLength: max + 1 }) as fc.Arbitrary<Segment>;
const size = (s: Segment) => Math.max(1, ...s.map((p) => Math.hypot(p[0], p[1])));

describe("degree elevation (Farin, Curves and Surfaces for CAGD, §5.1)", () => {
  it("traces the same curve at 257 parameters to 1e-12 relative, for n → any m", () => {
    fc.assert(
      fc.property(segment(1, 8), fc.integer({ min: 0, max: 12 }), (s, extra) => {
        const m = s.length - 1 + extra;
        const e = elevate(s, m);
        expect(e).toHaveLength(m + 1);
        for (let k = 0; k <= 256; k++) {
          const p = evaluate(s, k / 256);
          const q = evaluate(e, k / 256);
          expect(Math.hypot(p[0] - q[0], p[1] - q[1])).toBeLessThanOrEqual(1e-12 * size(s));
        }
        expect(e[0]).toEqual(s[0]);
        expect(e[m]).toEqual(s[s.length - 1]);
      }),
    );
  });

  it("one step matches the textbook formula Q_i = (i/(n+1)) P_{i−1} + (1 − i/(n+1)) P_i", () => {
    fc.assert(
      fc.property(segment(1, 6), (s) => {
        const n = s.length - 1;
        const e = elevate(s, n + 1);
        for (let i = 1; i <= n; i++) {
          const a = i / (n + 1);
          expect(e[i][0]).toBeCloseTo(a * s[i - 1][0] + (1 - a) * s[i][0], 9);
          expect(e[i][1]).toBeCloseTo(a * s[i - 1][1] + (1 - a) * s[i][1], 9);
        }
      }),
    );
  });

  it("refuses a target below the degree", () => {
    expect(() => elevate([[0, 0], [1, 1], [2, 0]], 1)).toThrow(RangeError);
  });
});

describe("degree reduction (least squares; compare Piegl & Tiller, The NURBS Book, A5.11)", () => {
  it("meets its stated bound: sampled distance ≤ errorBound, end points kept", () => {
    fc.assert(
      fc.property(segment(3, 9), fc.integer({ min: 1, max: 8 }), (s, m0) => {
        const m = Math.min(m0, s.length - 2);
        const r = reduce(s, m);
        expect(r.segment).toHaveLength(m + 1);
        let worst = 0;
        for (let k = 0; k <= 256; k++) {
          const p = evaluate(s, k / 256);
          const q = evaluate(r.segment, k / 256);
          worst = Math.max(worst, Math.hypot(p[0] - q[0], p[1] - q[1]));
        }
        expect(worst).toBeLessThanOrEqual(r.errorBound * (1 + 1e-9) + 1e-9 * size(s));
        expect(r.segment[0]).toEqual(s[0]);
        expect(r.segment[m]).toEqual(s[s.length - 1]);
      }),
    );
  });

  it("recovers exactly a curve that was elevated (error bound ~0)", () => {
    fc.assert(
      fc.property(segment(2, 5), fc.integer({ min: 1, max: 4 }), (s, extra) => {
        const up = elevate(s, s.length - 1 + extra);
        const r = reduce(up, s.length - 1);
        expect(r.errorBound).toBeLessThanOrEqual(1e-9 * size(s));
        for (let i = 0; i < s.length; i++) expect(Math.hypot(r.segment[i][0] - s[i][0], r.segment[i][1] - s[i][1])).toBeLessThanOrEqual(1e-8 * size(s));
      }),
    );
  });
});

describe("discretise", () => {
  it("keeps the two-sided Hausdorff distance within the tolerance, vertices on the curve, ends exact, at most Wang's count (Goldman, Pyramid Algorithms, §5.6)", () => {
    fc.assert(
      fc.property(segment(2, 6), fc.double({ min: 2e-3, max: 0.1, noNaN: true }), (s, rel) => {
        const tol = rel * size(s);
        const r = discretiseSegment(s, tol);
        expect(r.points[0]).toEqual(s[0]);
        expect(r.points[r.points.length - 1]).toEqual(s[s.length - 1]);
        const h = hausdorff(r.points, [s], tol * 5e-4);
        expect(h.value).toBeLessThanOrEqual(tol);
        expect(r.points.length - 1).toBeLessThanOrEqual(wangSegmentCount(s, tol));
        expect(r.maxDeviation).toBeLessThanOrEqual(tol);
      }),
      { numRuns: 30 },
    );
  });

  it("tolerance sweep from 1 to 1e-3 of the size on a cubic with a loop and one with a cusp", () => {
    const loop: Segment = [
      [0, 0],
      [300, 200],
      [-100, 200],
      [200, 0],
    ];
    const cusp: Segment = [
      [0, 0],
      [100, 100],
      [0, 100],
      [100, 0],
    ];
    for (const s of [loop, cusp])
      // Below 1e-3 the independent measurement (not the discretiser) becomes slow; see measure.ts.
      for (let e = 0; e >= -3; e--) {
        const tol = 100 * 10 ** e;
        const r = discretiseSegment(s, tol);
        for (const p of r.points) {
          expect(Number.isFinite(p[0]) && Number.isFinite(p[1])).toBe(true);
        }
        expect(hausdorff(r.points, [s], tol * 5e-4).value).toBeLessThanOrEqual(tol);
      }
  });

  it("straight and point segments give their end points only", () => {
    expect(discretiseSegment([[0, 0], [5, 0], [10, 0], [20, 0]], 0.1).points).toEqual([
      [0, 0],
      [20, 0],
    ]);
    expect(discretiseSegment([[3, 3], [3, 3], [3, 3], [3, 3]], 0.1).points).toEqual([
      [3, 3],
      [3, 3],
    ]);
  });

  it("joins a path's segments without repeating joints", () => {
    const path: Segment[] = [
      [[0, 0], [10, 10], [20, 10], [30, 0]],
      [[30, 0], [40, -10], [50, -10], [60, 0]],
    ];
    const r = discretisePath(path, 0.5);
    for (let i = 1; i < r.points.length; i++) expect(r.points[i]).not.toEqual(r.points[i - 1]);
    expect(r.points).toContainEqual([30, 0]);
  });
});

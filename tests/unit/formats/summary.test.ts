import { afterAll, describe, expect, it } from "vitest";
import { inspectDataset } from "../../../app/formats";
import { NoiseEstimator, niceCeil } from "../../../app/formats/summary";
import { scratch } from "./helpers";

const s = scratch();
afterAll(() => s.cleanup());

/** mulberry32 seeded PRNG and Box–Muller normal deviates (common practice). */
function normal(seed: number) {
  let a = seed >>> 0;
  const rnd = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  return () => Math.sqrt(-2 * Math.log(1 - rnd())) * Math.cos(2 * Math.PI * rnd());
}

/** A gentle meander sampled every 5 m, with independent Gaussian noise of σ metres per axis. */
function noisyLine(sigma: number, n = 4000, seed = 7): number[][] {
  const g = normal(seed);
  return Array.from({ length: n }, (_, i) => {
    const x = i * 5;
    const y = 40 * Math.sin(x / 800);
    return [500000 + x + sigma * g(), 5700000 + y + sigma * g()];
  });
}

describe("noise estimate", () => {
  it("recovers the σ of Gaussian vertex noise on a projected line, and suggests 3σ rounded up", async () => {
    for (const sigma of [0.2, 0.5, 2]) {
      const coords = noisyLine(sigma);
      const f = s.file(`noisy-${sigma}.geojson`, JSON.stringify({ type: "Feature", properties: {}, geometry: { type: "LineString", coordinates: coords } }));
      const summary = await inspectDataset([f], { crs: "EPSG:32630" });
      const est = summary.noiseEstimate!;
      expect(est.metres).toBeGreaterThan(sigma * 0.85);
      expect(est.metres).toBeLessThan(sigma * 1.15);
      expect(est.suggestedTolerance).toBe(niceCeil(3 * est.metres));
    }
  });

  it("measures in metres on longitude/latitude input", async () => {
    const sigma = 1;
    // Local metres to degrees near 52°N: 1° of latitude ≈ 111 320 m, of longitude × cos(52°) (common practice).
    const lat0 = 52;
    const coords = noisyLine(sigma).map(([x, y]) => [-1.5 + (x! - 500000) / (111320 * Math.cos((lat0 * Math.PI) / 180)), lat0 + (y! - 5700000) / 111320]);
    const f = s.file("noisy-wgs84.geojson", JSON.stringify({ type: "Feature", properties: {}, geometry: { type: "LineString", coordinates: coords } }));
    const est = (await inspectDataset([f])).noiseEstimate!;
    expect(est.metres).toBeGreaterThan(0.85);
    expect(est.metres).toBeLessThan(1.15);
  });

  it("reports no noise on an exact straight line", () => {
    const e = new NoiseEstimator(1, false);
    e.addLine(Array.from({ length: 100 }, (_, i) => [i * 3, i * 4]), false);
    expect(e.estimate()).toEqual({ metres: 0, suggestedTolerance: 0.001 });
  });

  it("rounds tolerances up to one significant digit", () => {
    expect([niceCeil(6.09), niceCeil(0.0123), niceCeil(3), niceCeil(1.5), niceCeil(950)]).toEqual([7, 0.02, 3, 2, 1000]);
  });
});

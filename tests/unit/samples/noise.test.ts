// The noise model of the sample traces, measured from the published files against the truth.
import proj4 from "proj4";
import { describe, expect, it } from "vitest";
import { generateTown } from "../../../samples/generate";
import { type XY, densify, distancesToPolyline, readSample, readTruth, rms } from "./helpers";

const truth = readTruth();
const toLocal = proj4("WGS84", truth.projection);

/** Published vertices of one truth feature, mapped back to local metres. */
function publishedLocal(name: string, file: string): XY[] {
  const fc = JSON.parse(readSample(file)) as {
    features: { properties: { name: string }; geometry: { type: string; coordinates: unknown } }[];
  };
  const f = fc.features.find((x) => x.properties.name === name);
  if (!f) throw new Error(`${file}: no feature named ${name}`);
  const coords = (f.geometry.type === "Polygon" ? (f.geometry.coordinates as number[][][])[0] : f.geometry.coordinates) as number[][];
  return coords.map((p) => toLocal.forward([p[0], p[1]]) as XY);
}

// 400 steps per segment keep the dense truth within about a millimetre of the curve (segments are
// at most a few hundred metres long, radii of curvature above 50 m: sagitta = h^2 / 8R).
const PER_SEGMENT = 400;

/**
 * For isotropic Gaussian noise N(0, sigma^2) per axis, the offset across a straight line is
 * N(0, sigma^2): its RMS is sigma and its mean absolute value is sigma * sqrt(2/pi), the mean of the
 * half-normal distribution (common practice). On bends with radius far above sigma the same holds
 * to first order.
 */
function noiseStats(sets: { points: XY[]; truth: XY[][]; skip: number[] }[]) {
  const all: number[] = [];
  const per: { rms: number; n: number; max: number }[] = [];
  for (const { points, truth: segs, skip } of sets) {
    const skipSet = new Set(skip);
    const kept = points.filter((_, i) => !skipSet.has(i));
    const d = distancesToPolyline(kept, densify(segs, PER_SEGMENT));
    all.push(...d);
    per.push({ rms: rms(d), n: d.length, max: Math.max(...d) });
  }
  const meanAbs = all.reduce((s, v) => s + v, 0) / all.length;
  return { rms: rms(all), meanAbs, n: all.length, per };
}

describe("noise of the published traces", () => {
  it("has the stated sigma as the RMS distance to the truth", () => {
    const sigma = truth.noise_sigma_m;
    const stats = noiseStats(
      truth.features.map((f) => ({
        points: publishedLocal(f.name, f.file),
        truth: f.segments_local_m,
        skip: f.spike_indices,
      })),
    );
    expect(stats.n).toBeGreaterThan(3000);
    // Pooled over about 5000 vertices the estimate's relative standard error is about 1%
    // (1 / sqrt(2n) for an RMS, 0.755 / sqrt(n) for a half-normal mean); 4% is four of those.
    expect(Math.abs(stats.rms / sigma - 1)).toBeLessThan(0.04);
    expect(Math.abs(stats.meanAbs / (sigma * Math.sqrt(2 / Math.PI)) - 1)).toBeLessThan(0.04);
    for (const p of stats.per) {
      expect(Math.abs(p.rms / sigma - 1)).toBeLessThan(0.2);
      // A normal deviate beyond 6 sigma has probability about 2e-9 (common practice).
      expect(p.max).toBeLessThan(6 * sigma);
    }
  });

  it("follows a different sigma and seed too", () => {
    const sigma = 3.5;
    const town = generateTown({ seed: 7, sigma });
    const stats = noiseStats(
      town.features.map((f) => ({
        // Through the rounded WGS84 output, so the projection is part of the check.
        points: f.wgs84.map((p) => toLocal.forward([p[0], p[1]]) as XY),
        truth: f.truth.segments,
        skip: f.trace.spikes,
      })),
    );
    expect(Math.abs(stats.rms / sigma - 1)).toBeLessThan(0.04);
  });

  it("throws spikes only on Ferry Road, far off the line", () => {
    for (const f of truth.features) {
      if (f.name !== "Ferry Road") {
        expect(f.spike_indices, f.name).toEqual([]);
        continue;
      }
      expect(f.spike_indices.length).toBe(2);
      const pts = publishedLocal(f.name, f.file);
      const d = distancesToPolyline(
        f.spike_indices.map((i) => pts[i]),
        densify(f.segments_local_m, PER_SEGMENT),
      );
      for (const v of d) {
        expect(v).toBeGreaterThan(20);
        expect(v).toBeLessThan(70);
      }
    }
  });

  it("marks duplicate vertices as exact repeats and counts them in the properties", () => {
    let total = 0;
    for (const f of truth.features) {
      const fc = JSON.parse(readSample(f.file)) as {
        features: { properties: Record<string, unknown>; geometry: { type: string; coordinates: unknown } }[];
      };
      const feat = fc.features.find((x) => x.properties.name === f.name)!;
      const coords = (feat.geometry.type === "Polygon" ? (feat.geometry.coordinates as number[][][])[0] : feat.geometry.coordinates) as number[][];
      expect(feat.properties.duplicate_vertices).toBe(f.duplicate_indices.length);
      expect(feat.properties.spike_vertices).toBe(f.spike_indices.length);
      expect(feat.properties.noise_sigma_m).toBe(truth.noise_sigma_m);
      for (const i of f.duplicate_indices) expect(coords[i], `${f.name} vertex ${i}`).toEqual(coords[i - 1]);
      // No other consecutive repeats.
      const dupSet = new Set(f.duplicate_indices);
      for (let i = 1; i < coords.length - (f.closed ? 1 : 0); i++) {
        if (!dupSet.has(i)) expect(coords[i]).not.toEqual(coords[i - 1]);
      }
      total += f.duplicate_indices.length;
    }
    // About 1% of some 5000 vertices.
    expect(total).toBeGreaterThan(20);
    expect(total).toBeLessThan(100);
  });
});

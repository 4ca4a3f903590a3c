// Shared readers for the sample tests: the committed files, and an independent way to measure a
// trace's distance from the ground truth.
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { SAMPLES_DIR, TOWN_SLUG } from "../../../samples/generate";

export type XY = [number, number];

export interface TruthFeature {
  name: string;
  kind: string;
  file: string;
  closed: boolean;
  corners: number[];
  duplicate_indices: number[];
  spike_indices: number[];
  segments_local_m: XY[][];
  segments_wgs84: XY[][];
}

export interface TruthFile {
  town: string;
  invented: boolean;
  origin: { lon: number; lat: number };
  projection: string;
  seed: number;
  noise_sigma_m: number;
  sample_spacing_m: number;
  features: TruthFeature[];
}

export const GEOJSON_FILES = ["roads", "river", "lake", "contours", "linework"].map(
  (f) => `${TOWN_SLUG}-${f}.geojson`,
);
export const TRUTH_FILE = `${TOWN_SLUG}-truth.json`;

export function readSample(name: string): string {
  return readFileSync(join(SAMPLES_DIR, name), "utf8");
}

export function readTruth(): TruthFile {
  return JSON.parse(readSample(TRUTH_FILE)) as TruthFile;
}

/** A point of a cubic by de Casteljau's algorithm (repeated linear interpolation; common practice). */
export function deCasteljau(ctrl: XY[], t: number): XY {
  let pts = ctrl.map((p) => [p[0], p[1]] as XY);
  while (pts.length > 1) {
    const next: XY[] = [];
    for (let i = 0; i + 1 < pts.length; i++) {
      next.push([pts[i][0] + t * (pts[i + 1][0] - pts[i][0]), pts[i][1] + t * (pts[i + 1][1] - pts[i][1])]);
    }
    pts = next;
  }
  return pts[0];
}

/** The truth densely sampled into a polyline: `perSegment` steps per Bézier segment. */
export function densify(segments: XY[][], perSegment: number): XY[] {
  const out: XY[] = [segments[0][0]];
  for (const seg of segments) {
    for (let k = 1; k <= perSegment; k++) out.push(deCasteljau(seg, k / perSegment));
  }
  return out;
}

function pointSegmentDistance(p: XY, a: XY, b: XY): number {
  const dx = b[0] - a[0];
  const dy = b[1] - a[1];
  const lenSq = dx * dx + dy * dy;
  const t = lenSq > 0 ? Math.max(0, Math.min(1, ((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / lenSq)) : 0;
  return Math.hypot(p[0] - (a[0] + t * dx), p[1] - (a[1] + t * dy));
}

/**
 * Distance from each query point to a polyline, through a uniform grid of the polyline's pieces.
 * Exact for the polyline as long as the true distance is below `cell` (always so for noise of a
 * few metres; spikes are measured by brute force when the grid finds nothing near).
 */
export function distancesToPolyline(points: XY[], line: XY[], cell = 25): number[] {
  const grid = new Map<string, number[]>();
  const key = (i: number, j: number) => `${i},${j}`;
  for (let s = 0; s + 1 < line.length; s++) {
    const [a, b] = [line[s], line[s + 1]];
    const i0 = Math.floor(Math.min(a[0], b[0]) / cell);
    const i1 = Math.floor(Math.max(a[0], b[0]) / cell);
    const j0 = Math.floor(Math.min(a[1], b[1]) / cell);
    const j1 = Math.floor(Math.max(a[1], b[1]) / cell);
    for (let i = i0; i <= i1; i++) {
      for (let j = j0; j <= j1; j++) {
        const k = key(i, j);
        const list = grid.get(k);
        if (list) list.push(s);
        else grid.set(k, [s]);
      }
    }
  }
  return points.map((p) => {
    const ci = Math.floor(p[0] / cell);
    const cj = Math.floor(p[1] / cell);
    let best = Infinity;
    for (let i = ci - 1; i <= ci + 1; i++) {
      for (let j = cj - 1; j <= cj + 1; j++) {
        for (const s of grid.get(key(i, j)) ?? []) best = Math.min(best, pointSegmentDistance(p, line[s], line[s + 1]));
      }
    }
    if (best <= cell) return best;
    for (let s = 0; s + 1 < line.length; s++) best = Math.min(best, pointSegmentDistance(p, line[s], line[s + 1]));
    return best;
  });
}

export function rms(values: number[]): number {
  return Math.sqrt(values.reduce((sum, v) => sum + v * v, 0) / values.length);
}

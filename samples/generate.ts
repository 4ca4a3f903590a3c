/**
 * Demo datasets of Brindlewick, an invented market town.
 *
 * Nothing here describes a real place. Brindlewick, the river Sallow, Tarnell Mere, Beacon Knoll
 * and every road name are made up. The town is anchored at 47.85° N, 27.35° W, a point in the
 * open North Atlantic far from any land or town (from memory), so the data cannot be mistaken for
 * a survey of somewhere that exists.
 *
 * The ground truth is a set of piecewise cubic Béziers in a local metric frame (metres, x east,
 * y north, origin at the town centre). From it this script makes noisy GPS-like traces
 * (arc-length sampling, Gaussian noise, occasional duplicate vertices, rare spikes), maps them to
 * WGS84 longitude/latitude with proj4 through a transverse Mercator centred on the town, and
 * writes RFC 7946 GeoJSON plus a truth file. Run `npm run samples` to regenerate the committed
 * files; the output is deterministic for a given seed.
 */
import { mkdirSync, writeFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import type { Feature, FeatureCollection, LineString, Polygon, Position } from "geojson";
import proj4 from "proj4";
import { writeOutput, type GeoJSONFeature } from "../app/formats";

// ---------------------------------------------------------------------------------------------
// Plain data types

/** A point in the local frame: metres east, metres north of the town centre. */
export type Point = [number, number];
/** A cubic Bézier segment: from, ctrl1, ctrl2, to. */
export type Cubic = [Point, Point, Point, Point];

/** A piecewise cubic Bézier path. Segments join exactly (segment i's `to` is segment i+1's `from`). */
export interface Curve {
  segments: Cubic[];
  /** True when the last segment ends where the first begins (a ring). */
  closed: boolean;
  /**
   * Joints that are true corners (no G1 continuity). Joint j is where segment j-1 meets segment
   * j; for a closed curve joint 0 is the seam. Every other interior joint is G1.
   */
  corners: number[];
}

export type FeatureKind = "road" | "river" | "shore" | "contour";
export type SampleFile = "roads" | "river" | "lake" | "contours";

export interface TraceOptions {
  /** Mean distance between consecutive samples along the curve, metres. Steps are drawn uniformly from [0.4, 1.6] × spacing. */
  spacing: number;
  /** Standard deviation of the Gaussian noise on each axis, metres. */
  sigma: number;
  /** Seed of the PRNG for this trace. */
  seed: number;
  /** Probability that a vertex is repeated exactly (a logger writing the same fix twice). Default 0.01. */
  duplicateRate?: number;
  /** Number of spike vertices (single outliers 25–60 m off the line). Default 0. */
  spikes?: number;
}

export interface Trace {
  /** Noisy vertices in the local frame. A closed curve's trace repeats its first vertex at the end. */
  points: Point[];
  /** Indices (into `points`) of vertices that exactly repeat the previous vertex. */
  duplicates: number[];
  /** Indices (into `points`) of spike vertices. */
  spikes: number[];
}

export interface TownFeature {
  name: string;
  kind: FeatureKind;
  file: SampleFile;
  /** Extra GeoJSON properties (e.g. `elevation_m` for contours). */
  extra: Record<string, number | string>;
  truth: Curve;
  trace: Trace;
  /** The trace in WGS84, [lon, lat], rounded to 7 decimals. */
  wgs84: Position[];
}

export interface Town {
  name: string;
  origin: { lon: number; lat: number };
  /** proj4 definition of the local frame (metres); WGS84 is the other side. */
  projection: string;
  seed: number;
  spacing: number;
  sigma: number;
  features: TownFeature[];
}

export interface TownOptions {
  seed?: number;
  /** Mean sample spacing in metres (default 5, so steps fall between 2 and 8 m). */
  spacing?: number;
  /** Noise standard deviation per axis in metres (default 2). */
  sigma?: number;
}

// ---------------------------------------------------------------------------------------------
// The invented place

export const TOWN_NAME = "Brindlewick";
export const TOWN_SLUG = "brindlewick";
/** Invented anchor point: open sea in the North Atlantic, no real town here. */
export const ORIGIN = { lon: -27.35, lat: 47.85 } as const;
/** Transverse Mercator centred on the town, scale 1 on the central meridian, WGS84 ellipsoid. */
export const LOCAL_PROJECTION =
  `+proj=tmerc +lat_0=${ORIGIN.lat} +lon_0=${ORIGIN.lon} +k=1 +x_0=0 +y_0=0 +ellps=WGS84 +units=m +no_defs`;
export const DEFAULT_SEED = 20240611;
export const DEFAULT_SPACING = 5;
export const DEFAULT_SIGMA = 2;

const toWgs84 = proj4(LOCAL_PROJECTION, "WGS84");

/** Local metres → [lon, lat] in WGS84 (not rounded). */
export function localToWgs84(p: Point): Position {
  return toWgs84.forward([p[0], p[1]]);
}

/** [lon, lat] in WGS84 → local metres. */
export function wgs84ToLocal(p: Position): Point {
  const q = toWgs84.inverse([p[0], p[1]]);
  return [q[0], q[1]];
}

// ---------------------------------------------------------------------------------------------
// Small numeric helpers

/**
 * mulberry32: a 32-bit seeded PRNG returning floats in [0, 1). Common practice (a widely copied
 * public-domain generator); good enough for test data, not for cryptography.
 */
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * Two independent standard normal deviates from two uniforms, by the Box–Muller transform
 * (G. E. P. Box and M. E. Muller, "A Note on the Generation of Random Normal Deviates",
 * Ann. Math. Statist. 29(2), 1958, 610–611).
 */
export function gaussianPair(rand: () => number): [number, number] {
  const u1 = 1 - rand(); // (0, 1]: keeps log finite
  const u2 = rand();
  const r = Math.sqrt(-2 * Math.log(u1));
  return [r * Math.cos(2 * Math.PI * u2), r * Math.sin(2 * Math.PI * u2)];
}

/** A seed for sub-stream `index` of `seed` (golden-ratio increment, common practice). */
export function deriveSeed(seed: number, index: number): number {
  return (seed ^ Math.imul(index + 1, 0x9e3779b9)) >>> 0;
}

const roundTo = (v: number, decimals: number): number => {
  const f = 10 ** decimals;
  const r = Math.round(v * f) / f;
  return r === 0 ? 0 : r; // never write -0
};
const mm = (v: number): number => roundTo(v, 3);

// ---------------------------------------------------------------------------------------------
// Bézier helpers (kept here so the samples do not depend on the geometry core they test)

/** Point on a cubic Bézier at parameter t (Bernstein form). */
export function cubicPoint(c: Cubic, t: number): Point {
  const s = 1 - t;
  const b0 = s * s * s;
  const b1 = 3 * s * s * t;
  const b2 = 3 * s * t * t;
  const b3 = t * t * t;
  return [
    b0 * c[0][0] + b1 * c[1][0] + b2 * c[2][0] + b3 * c[3][0],
    b0 * c[0][1] + b1 * c[1][1] + b2 * c[2][1] + b3 * c[3][1],
  ];
}

/**
 * A path through `anchors` with Catmull–Rom tangents converted to Bézier handles (handle =
 * (next − previous) / 6 at a smooth anchor; common practice). Ends of an open path and anchors
 * listed in `cornerAnchors` get one-sided handles aimed a third of the way to the neighbour, so
 * the path really turns there. Coordinates are rounded to the millimetre; the handles at a
 * smooth anchor are rounded as one vector, so the joint stays exactly collinear (G1).
 */
export function pathThrough(anchors: Point[], opts: { closed?: boolean; cornerAnchors?: number[] } = {}): Curve {
  const closed = opts.closed ?? false;
  const cornerSet = new Set(opts.cornerAnchors ?? []);
  const P = anchors.map((p) => [mm(p[0]), mm(p[1])] as Point);
  const n = P.length;
  if (n < 2) throw new Error("pathThrough needs at least two anchors");
  const at = (i: number): Point => P[((i % n) + n) % n];
  const isCorner = (i: number): boolean => cornerSet.has(i) || (!closed && (i === 0 || i === n - 1));
  // Outgoing handle vector at anchor i (towards i+1) and incoming handle vector (from i-1).
  const handle = (i: number, dir: 1 | -1): Point => {
    const p = at(i);
    if (isCorner(i)) {
      const q = at(i + dir);
      return [mm((q[0] - p[0]) / 3), mm((q[1] - p[1]) / 3)];
    }
    const next = at(i + 1);
    const prev = at(i - 1);
    const h: Point = [mm((next[0] - prev[0]) / 6), mm((next[1] - prev[1]) / 6)];
    return dir === 1 ? h : [-h[0], -h[1]];
  };
  const segments: Cubic[] = [];
  const count = closed ? n : n - 1;
  for (let i = 0; i < count; i++) {
    const a = at(i);
    const b = at(i + 1);
    const out = handle(i, 1);
    const inn = handle(i + 1, -1);
    segments.push([a, [mm(a[0] + out[0]), mm(a[1] + out[1])], [mm(b[0] + inn[0]), mm(b[1] + inn[1])], b]);
  }
  const corners: number[] = [];
  for (let i = 0; i < n; i++) if (cornerSet.has(i) && (closed || (i > 0 && i < n - 1))) corners.push(i);
  return { segments, closed, corners };
}

/** Cumulative chord-length table of one segment, `steps` sub-intervals. */
function segmentTable(c: Cubic, steps: number): Float64Array {
  const table = new Float64Array(steps + 1);
  let prev = c[0];
  for (let k = 1; k <= steps; k++) {
    const p = cubicPoint(c, k / steps);
    table[k] = table[k - 1] + Math.hypot(p[0] - prev[0], p[1] - prev[1]);
    prev = p;
  }
  return table;
}

interface ArcTable {
  tables: Float64Array[];
  /** Length at the start of each segment, plus the total at the end. */
  starts: number[];
  length: number;
}

const TABLE_STEPS = 256; // sub-intervals per segment; chord error is far below the sample spacing
const arcTables = new WeakMap<Curve, ArcTable>();

function arcTable(curve: Curve): ArcTable {
  let cached = arcTables.get(curve);
  if (cached) return cached;
  const tables = curve.segments.map((c) => segmentTable(c, TABLE_STEPS));
  const starts = [0];
  for (const t of tables) starts.push(starts[starts.length - 1] + t[TABLE_STEPS]);
  cached = { tables, starts, length: starts[starts.length - 1] };
  arcTables.set(curve, cached);
  return cached;
}

/** Approximate arc length of a curve (chord sum over 256 steps per segment). */
export function curveLength(curve: Curve): number {
  return arcTable(curve).length;
}

/**
 * The point at arc length `s` along the curve, plus the unit tangent there. The point lies exactly
 * on the curve; only its arc-length position is approximate (table interpolation).
 */
export function pointAtLength(curve: Curve, s: number): { point: Point; tangent: Point } {
  const { tables, starts, length } = arcTable(curve);
  const target = Math.min(Math.max(s, 0), length);
  let i = 0;
  let lo = 0;
  let hi = curve.segments.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (starts[mid] <= target) {
      i = mid;
      lo = mid + 1;
    } else hi = mid - 1;
  }
  const table = tables[i];
  const local = target - starts[i];
  let a = 0;
  let b = TABLE_STEPS;
  while (b - a > 1) {
    const m = (a + b) >> 1;
    if (table[m] <= local) a = m;
    else b = m;
  }
  const span = table[b] - table[a];
  const t = (a + (span > 0 ? (local - table[a]) / span : 0)) / TABLE_STEPS;
  const c = curve.segments[i];
  const point = cubicPoint(c, Math.min(t, 1));
  const t1 = Math.min(t + 1e-6, 1);
  const t0 = t1 - 1e-6;
  const p0 = cubicPoint(c, t0);
  const p1 = cubicPoint(c, t1);
  const d = Math.hypot(p1[0] - p0[0], p1[1] - p0[1]) || 1;
  return { point, tangent: [(p1[0] - p0[0]) / d, (p1[1] - p0[1]) / d] };
}

// ---------------------------------------------------------------------------------------------
// Noisy traces

/**
 * A GPS-like trace of `curve`: samples every `spacing × U(0.4, 1.6)` metres of arc length,
 * independent Gaussian noise N(0, sigma²) on each axis, an exact repeat of a vertex with
 * probability `duplicateRate`, and `spikes` single vertices thrown 25–60 m sideways.
 * Open curves keep both end points (noised); closed curves repeat the first vertex at the end.
 */
export function noisyTrace(curve: Curve, opts: TraceOptions): Trace {
  const { spacing, sigma, seed } = opts;
  if (!(spacing > 0)) throw new RangeError(`noisyTrace: spacing must be > 0 (got ${spacing})`);
  if (!(sigma >= 0)) throw new RangeError(`noisyTrace: sigma must be >= 0 (got ${sigma})`);
  const duplicateRate = opts.duplicateRate ?? 0.01;
  const spikeCount = opts.spikes ?? 0;
  const rand = mulberry32(seed);
  const length = curveLength(curve);
  const stations: number[] = [0];
  const stopAt = curve.closed ? length - 0.4 * spacing : length;
  for (;;) {
    const next = stations[stations.length - 1] + spacing * (0.4 + 1.2 * rand());
    if (next >= stopAt) break;
    stations.push(next);
  }
  if (!curve.closed) stations.push(length);

  const clean: { point: Point; tangent: Point }[] = stations.map((s) => pointAtLength(curve, s));
  // Spikes go on interior stations, well apart, chosen before the noise so they are stable.
  const spikeStations = new Set<number>();
  const interior = clean.length - 2;
  for (let k = 0; k < spikeCount && interior > 0; k++) {
    const slot = Math.floor(((k + 0.25 + 0.5 * rand()) / spikeCount) * interior) + 1;
    spikeStations.add(Math.min(slot, clean.length - 2));
  }

  const points: Point[] = [];
  const duplicates: number[] = [];
  const spikes: number[] = [];
  clean.forEach(({ point, tangent }, k) => {
    const [nx, ny] = gaussianPair(rand);
    let p: Point = [point[0] + sigma * nx, point[1] + sigma * ny];
    if (spikeStations.has(k)) {
      const side = rand() < 0.5 ? -1 : 1;
      const offset = side * (25 + 35 * rand());
      p = [p[0] - tangent[1] * offset, p[1] + tangent[0] * offset];
      spikes.push(points.length);
      points.push(p);
      return;
    }
    points.push(p);
    const last = k === clean.length - 1;
    if (!last && rand() < duplicateRate) {
      duplicates.push(points.length);
      points.push([p[0], p[1]]);
    }
  });
  if (curve.closed) points.push([points[0][0], points[0][1]]);
  return { points, duplicates, spikes };
}

// ---------------------------------------------------------------------------------------------
// The town's ground truth

interface FeatureSpec {
  name: string;
  kind: FeatureKind;
  file: SampleFile;
  curve: Curve;
  spikes: number;
  extra: Record<string, number | string>;
}

/**
 * Anchors of a sine-generated meander: the channel direction varies as θ(s) = θ0 + ω sin(2πs/M)
 * along the channel (W. B. Langbein and L. B. Leopold, "River meanders — theory of minimum
 * variance", USGS Professional Paper 422-H, 1966). ω and M drift slowly so the bends are not all
 * alike. Integrated with 1 m midpoint steps; an anchor every `every` metres of channel.
 */
function meanderAnchors(start: Point, length: number, every: number): Point[] {
  const theta0 = (-20 * Math.PI) / 180;
  const anchors: Point[] = [start];
  let x = start[0];
  let y = start[1];
  let phase = 0; // ∫ 2π / M(s) ds, so a drifting wavelength never bunches the bends
  for (let s = 0; s < length; s++) {
    const m = s + 0.5;
    const omega = 1.05 + 0.3 * Math.sin((2 * Math.PI * m) / 3300);
    const wavelength = 820 + 160 * Math.sin((2 * Math.PI * m) / 2300 + 1);
    const theta = theta0 + omega * Math.sin(phase + Math.PI / wavelength);
    phase += (2 * Math.PI) / wavelength;
    x += Math.cos(theta);
    y += Math.sin(theta);
    if ((s + 1) % every === 0 || s + 1 === length) anchors.push([x, y]);
  }
  return anchors;
}

/** A closed ring of `count` anchors around `centre` with a lobed radius (angles increase: counter-clockwise). */
function lobedRing(centre: Point, rx: number, ry: number, count: number, lobes: [number, number, number][]): Point[] {
  const out: Point[] = [];
  for (let k = 0; k < count; k++) {
    const a = (2 * Math.PI * k) / count;
    let r = 1;
    for (const [amp, freq, phase] of lobes) r += amp * Math.sin(freq * a + phase);
    out.push([centre[0] + rx * r * Math.cos(a), centre[1] + ry * r * Math.sin(a)]);
  }
  return out;
}

function townSpecs(): FeatureSpec[] {
  const road = (name: string, anchors: Point[], cornerAnchors: number[] = [], spikes = 0): FeatureSpec => ({
    name,
    kind: "road",
    file: "roads",
    curve: pathThrough(anchors, { cornerAnchors }),
    spikes,
    extra: {},
  });
  return [
    // High Street runs east from the west end and turns sharply north at the Market Cross.
    road(
      "High Street",
      [[-1250, -110], [-980, -88], [-700, -60], [-330, -25], [0, 0], [40, 380], [110, 760], [230, 1130], [400, 1480]],
      [4],
    ),
    // Ferry Road leaves the Market Cross south-east in an easy curve down to the ferry landing on the Sallow.
    road(
      "Ferry Road",
      [[0, 0], [230, -150], [430, -350], [570, -580], [640, -845]],
      [],
      2,
    ),
    // Kiln Lane: a dog-leg with two right-angle turns at the old kiln yard.
    road("Kiln Lane", [[-700, -60], [-760, 260], [-780, 640], [-380, 690], [-20, 720], [40, 380]], [2, 4]),
    // The Ridgeway follows the high ground south of the town in a gentle arc.
    road(
      "The Ridgeway",
      [[-2600, -900], [-2150, -1260], [-1650, -1520], [-1100, -1660], [-500, -1680], [100, -1600], [650, -1450]],
    ),
    // Mere Lane branches off High Street at a square junction and bends down to the mere.
    road("Mere Lane", [[110, 760], [500, 820], [860, 940], [1150, 1140], [1400, 1420]]),
    {
      name: "River Sallow",
      kind: "river",
      file: "river",
      curve: pathThrough(meanderAnchors([-2900, 200], 7000, 90)),
      spikes: 0,
      extra: {},
    },
    {
      name: "Tarnell Mere",
      kind: "shore",
      file: "lake",
      curve: pathThrough(
        lobedRing([1750, 1700], 420, 280, 18, [
          [0.11, 3, 0.5],
          [0.06, 5, 2.1],
        ]),
        { closed: true },
      ),
      spikes: 0,
      extra: {},
    },
    {
      name: "Beacon Knoll 40 m",
      kind: "contour",
      file: "contours",
      curve: pathThrough(lobedRing([-1500, 1450], 520, 380, 16, [[0.09, 2, 0.3], [0.05, 4, 1.7]]), { closed: true }),
      spikes: 0,
      extra: { elevation_m: 40 },
    },
    {
      name: "Beacon Knoll 60 m",
      kind: "contour",
      file: "contours",
      curve: pathThrough(lobedRing([-1560, 1490], 260, 190, 12, [[0.08, 3, 1.1]]), { closed: true }),
      spikes: 0,
      extra: { elevation_m: 60 },
    },
  ];
}

/** Round a local trace through WGS84 to 7 decimals (about 1 cm). */
function toRoundedWgs84(points: Point[]): Position[] {
  return points.map((p) => {
    const q = localToWgs84(p);
    return [roundTo(q[0], 7), roundTo(q[1], 7)];
  });
}

/**
 * The whole town: ground truth plus one noisy trace per feature, in metres and in WGS84.
 * Feature i's noise comes from PRNG sub-stream i of the seed, so changing one feature leaves the
 * others' noise alone.
 */
export function generateTown(options: TownOptions = {}): Town {
  const seed = options.seed ?? DEFAULT_SEED;
  const spacing = options.spacing ?? DEFAULT_SPACING;
  const sigma = options.sigma ?? DEFAULT_SIGMA;
  const features = townSpecs().map((spec, i): TownFeature => {
    const trace = noisyTrace(spec.curve, { spacing, sigma, seed: deriveSeed(seed, i), spikes: spec.spikes });
    return {
      name: spec.name,
      kind: spec.kind,
      file: spec.file,
      extra: spec.extra,
      truth: spec.curve,
      trace,
      wgs84: toRoundedWgs84(trace.points),
    };
  });
  return { name: TOWN_NAME, origin: { ...ORIGIN }, projection: LOCAL_PROJECTION, seed, spacing, sigma, features };
}

// ---------------------------------------------------------------------------------------------
// Large datasets for benchmarks

export interface LargeDatasetOptions {
  /** `wgs84` (default): [lon, lat] like the published files; `local`: metres in the town frame. */
  frame?: "wgs84" | "local";
  spacing?: number;
  sigma?: number;
}

/** Distance between tile origins, metres: wider than the town, so tiles never overlap. */
const TILE_PITCH = 8000;

/**
 * A FeatureCollection with exactly `vertexCount` vertices in total, made by tiling copies of the
 * town's linework on an 8 km grid, each copy with fresh noise. The last feature is a stretch of
 * river trace cut to the count still needed. Properties match the town files plus `tile`.
 * In the `local` frame the coordinates are metres (not RFC 7946; for geometry benchmarks).
 */
export function generateLargeDataset(
  vertexCount: number,
  seed: number = DEFAULT_SEED,
  options: LargeDatasetOptions = {},
): FeatureCollection<LineString | Polygon> {
  if (!Number.isInteger(vertexCount) || vertexCount < 2) {
    throw new RangeError(`generateLargeDataset: vertexCount must be an integer >= 2 (got ${vertexCount})`);
  }
  const frame = options.frame ?? "wgs84";
  const spacing = options.spacing ?? DEFAULT_SPACING;
  const sigma = options.sigma ?? DEFAULT_SIGMA;
  const specs = townSpecs();
  const river = specs.find((s) => s.kind === "river")!;
  const perRow = Math.max(1, Math.ceil(Math.sqrt(vertexCount / 5000)));
  const features: Feature<LineString | Polygon>[] = [];
  let total = 0;
  let stream = 0;
  let tile = 0;
  const place = (points: Point[]): Position[] => {
    const ox = ((tile % perRow) - (perRow - 1) / 2) * TILE_PITCH;
    const oy = (Math.floor(tile / perRow) - (perRow - 1) / 2) * TILE_PITCH;
    const moved = points.map((p): Point => [p[0] + ox, p[1] + oy]);
    return frame === "local" ? moved : toRoundedWgs84(moved);
  };
  const push = (spec: FeatureSpec, points: Point[]): void => {
    const coords = place(points);
    const properties = { name: spec.name, kind: spec.kind, noise_sigma_m: sigma, ...spec.extra, tile };
    const geometry: LineString | Polygon =
      spec.kind === "shore" ? { type: "Polygon", coordinates: [coords] } : { type: "LineString", coordinates: coords };
    features.push({ type: "Feature", properties, geometry });
    total += points.length;
  };
  fill: for (;;) {
    for (const spec of specs) {
      const trace = noisyTrace(spec.curve, { spacing, sigma, seed: deriveSeed(seed, stream++), spikes: spec.spikes });
      const after = total + trace.points.length;
      // Stop before a full feature would overshoot or leave a single vertex (a LineString needs two).
      if (after > vertexCount || vertexCount - after === 1) break fill;
      push(spec, trace.points);
      if (after === vertexCount) return { type: "FeatureCollection", features };
    }
    tile++;
  }
  // Top up with river stretches, each at least two vertices.
  while (total < vertexCount) {
    const trace = noisyTrace(river.curve, { spacing, sigma, seed: deriveSeed(seed, stream++) });
    const left = vertexCount - total;
    let take = Math.min(left, trace.points.length);
    if (left - take === 1) take -= 1;
    push({ ...river, curve: { ...river.curve, closed: false } }, trace.points.slice(0, take));
  }
  return { type: "FeatureCollection", features };
}

// ---------------------------------------------------------------------------------------------
// Files

function featureOf(f: TownFeature, sigma: number, spacing: number): Feature<LineString | Polygon> {
  const geometry: LineString | Polygon =
    f.kind === "shore" ? { type: "Polygon", coordinates: [f.wgs84] } : { type: "LineString", coordinates: f.wgs84 };
  return {
    type: "Feature",
    properties: {
      name: f.name,
      kind: f.kind,
      ...f.extra,
      noise_sigma_m: sigma,
      sample_spacing_m: spacing,
      duplicate_vertices: f.trace.duplicates.length,
      spike_vertices: f.trace.spikes.length,
    },
    geometry,
  };
}

/** A FeatureCollection as JSON text, one feature per line (valid JSON, readable diffs). */
function collectionText(features: Feature[], description: string): string {
  const lines = features.map((f) => JSON.stringify(f));
  return (
    `{"type":"FeatureCollection","description":${JSON.stringify(description)},"features":[\n` +
    lines.join(",\n") +
    "\n]}\n"
  );
}

const DESCRIPTION =
  "Invented demo data: the town of Brindlewick does not exist. Noisy GPS-like traces generated by samples/generate.ts.";

function truthText(town: Town): string {
  const segmentsWgs84 = (c: Curve): Position[][] =>
    c.segments.map((seg) => seg.map((p) => toRoundedWgs84([p])[0]));
  const body = {
    town: town.name,
    invented: true,
    note:
      "Ground truth of the demo datasets. Control points are exact in the local frame (metres, x east, y north). " +
      "The WGS84 control points are the local ones mapped through the projection: at town scale the map is " +
      "nearly affine, but they are not an exact Bézier of the projected curve. Trace indices refer to the " +
      "published vertex lists (for the lake, the Polygon's exterior ring).",
    origin: town.origin,
    projection: town.projection,
    seed: town.seed,
    noise_sigma_m: town.sigma,
    sample_spacing_m: town.spacing,
    features: town.features.map((f) => ({
      name: f.name,
      kind: f.kind,
      file: `${TOWN_SLUG}-${f.file}.geojson`,
      closed: f.truth.closed,
      corners: f.truth.corners,
      duplicate_indices: f.trace.duplicates,
      spike_indices: f.trace.spikes,
      segments_local_m: f.truth.segments,
      segments_wgs84: segmentsWgs84(f.truth),
    })),
  };
  return JSON.stringify(body, null, 1) + "\n";
}

/** Every sample file's name and full text for a town generated with `options`. */
export function renderTownFiles(options: TownOptions = {}): Record<string, string> {
  const town = generateTown(options);
  const pick = (file: SampleFile) =>
    town.features.filter((f) => f.file === file).map((f) => featureOf(f, town.sigma, town.spacing));
  const files: Record<string, string> = {};
  for (const file of ["roads", "river", "lake", "contours"] as const) {
    files[`${TOWN_SLUG}-${file}.geojson`] = collectionText(pick(file), DESCRIPTION);
  }
  files[`${TOWN_SLUG}-linework.geojson`] = collectionText(
    town.features.map((f) => featureOf(f, town.sigma, town.spacing)),
    DESCRIPTION,
  );
  files[`${TOWN_SLUG}-truth.json`] = truthText(town);
  return files;
}

export const SAMPLES_DIR = dirname(fileURLToPath(import.meta.url));

/** The zipped Shapefile sample: the town's lines in a projected CRS, as engineers often receive them. */
export const SHAPEFILE_SAMPLE = `${TOWN_SLUG}-lines-utm26n.zip`;
/** UTM zone 26 N (WGS 84): the zone of 27.35° W (zones are 6° wide from 180° W; common practice). */
export const SHAPEFILE_SAMPLE_CRS = "EPSG:32626";
const UTM_26N = "+proj=utm +zone=26 +datum=WGS84 +units=m +no_defs";

/**
 * Roads, river and contours (the line features; a Shapefile holds one shape type) projected to
 * UTM zone 26 N with proj4, to the millimetre, and written as a zipped Shapefile with .prj and .cpg
 * by Lissom's own writer. Its .dbf header and metadata carry the day they were written, so the
 * committed file is compared with a fresh one by content, not byte for byte.
 */
export async function writeTownShapefile(dir: string = SAMPLES_DIR, options: TownOptions = {}): Promise<string> {
  const town = generateTown(options);
  const toUtm = proj4("WGS84", UTM_26N);
  const features = town.features
    .filter((f) => f.kind !== "shore")
    .map((f): GeoJSONFeature => {
      const wgs = featureOf(f, town.sigma, town.spacing);
      const coordinates = (wgs.geometry as LineString).coordinates.map((p) => toUtm.forward([p[0]!, p[1]!]).map((v) => Math.round(v * 1000) / 1000));
      return { type: "Feature", properties: wgs.properties as Record<string, unknown>, geometry: { type: "LineString", coordinates } };
    });
  async function* each() {
    yield* features;
  }
  const path = join(dir, SHAPEFILE_SAMPLE);
  await writeOutput("shapefile", each(), path, {
    crs: SHAPEFILE_SAMPLE_CRS,
    tolerance_m: null,
    steps: [],
    source: { dataset: "Brindlewick lines (invented demo data, samples/generate.ts)" },
    title: DESCRIPTION,
  });
  return path;
}

/** Write the sample files into `dir` (default: this folder). Returns the paths written. */
export function writeTownFiles(dir: string = SAMPLES_DIR, options: TownOptions = {}): string[] {
  mkdirSync(dir, { recursive: true });
  return Object.entries(renderTownFiles(options)).map(([name, text]) => {
    const path = join(dir, name);
    writeFileSync(path, text);
    return path;
  });
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  for (const path of writeTownFiles()) console.log(`wrote ${path}`);
  console.log(`wrote ${await writeTownShapefile()}`);
}

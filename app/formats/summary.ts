import type { CrsSummary, DatasetSummary, DatasetWarning, GeoJSONFeature, InputFormat, Position } from "./types";

/** Warnings kept in a summary; past this, one closing note counts the rest. */
export const MAX_SUMMARY_WARNINGS = 200;

/**
 * Builds a `DatasetSummary` while features stream past: counts, bounding box, attribute types
 * and the noise estimate. Memory stays constant (a fixed histogram, no vertex kept).
 */
export class SummaryBuilder {
  features = 0;
  parts = 0;
  vertices = 0;
  skipped = 0;
  geometryTypes: Record<string, number> = {};
  attributes: Record<string, string> = {};
  warnings: DatasetWarning[] = [];
  private extraWarnings = 0;
  private minX = Infinity;
  private minY = Infinity;
  private maxX = -Infinity;
  private maxY = -Infinity;
  hasZ = false;
  hasM = false;
  readonly noise: NoiseEstimator;

  constructor(
    private format: InputFormat,
    /** Metres per CRS unit; for geographic CRSs the estimator scales longitude by cos(latitude). */
    metresPerUnit: number,
    geographic: boolean,
  ) {
    this.noise = new NoiseEstimator(metresPerUnit, geographic);
  }

  warn(w: DatasetWarning): void {
    if (w.action === "skipped") this.skipped++;
    if (this.warnings.length < MAX_SUMMARY_WARNINGS) this.warnings.push(w);
    else this.extraWarnings++;
  }

  add(feature: GeoJSONFeature): void {
    this.features++;
    const g = feature.geometry;
    this.geometryTypes[g.type] = (this.geometryTypes[g.type] ?? 0) + 1;
    switch (g.type) {
      case "LineString":
        this.part(g.coordinates, false);
        break;
      case "MultiLineString":
      case "Polygon":
        for (const l of g.coordinates) this.part(l, g.type === "Polygon");
        break;
      case "MultiPolygon":
        for (const p of g.coordinates) for (const r of p) this.part(r, true);
        break;
    }
    const props = feature.properties;
    if (props) {
      for (const key in props) {
        const t = attributeType(props[key]);
        const had = this.attributes[key];
        if (had === undefined || had === "null") this.attributes[key] = t;
        else if (had !== t && t !== "null") this.attributes[key] = had === "integer" && t === "number" ? "number" : had === "number" && t === "integer" ? "number" : "mixed";
      }
    }
  }

  private part(line: Position[], ring: boolean): void {
    this.parts++;
    const n = line.length;
    this.vertices += n;
    for (let i = 0; i < n; i++) {
      const p = line[i]!;
      const x = p[0]!;
      const y = p[1]!;
      if (x < this.minX) this.minX = x;
      if (x > this.maxX) this.maxX = x;
      if (y < this.minY) this.minY = y;
      if (y > this.maxY) this.maxY = y;
      if (p.length > 2) {
        this.hasZ = true;
        if (p.length > 3) this.hasM = true;
      }
    }
    this.noise.addLine(line, ring);
  }

  /** Sets the attribute types from a declared schema (a .dbf header) before any feature. */
  declareAttributes(types: Record<string, string>): void {
    Object.assign(this.attributes, types);
  }

  finish(crs: CrsSummary, extra: Partial<DatasetSummary> = {}): DatasetSummary {
    const warnings = this.warnings.slice();
    if (this.extraWarnings > 0) warnings.push({ message: `${this.extraWarnings} more warnings not listed`, action: "note" });
    const noise = this.noise.estimate();
    return {
      format: this.format,
      features: this.features,
      parts: this.parts,
      vertices: this.vertices,
      geometryTypes: this.geometryTypes,
      crs,
      bbox: this.features > 0 ? [this.minX, this.minY, this.maxX, this.maxY] : null,
      attributes: this.attributes,
      ...(noise ? { noiseEstimate: noise } : {}),
      warnings,
      skipped: this.skipped,
      hasZ: this.hasZ,
      hasM: this.hasM,
      ...extra,
    };
  }
}

function attributeType(v: unknown): string {
  if (v === null || v === undefined) return "null";
  if (typeof v === "number") return Number.isInteger(v) ? "integer" : "number";
  if (typeof v === "string") return "string";
  if (typeof v === "boolean") return "boolean";
  if (v instanceof Date) return "date";
  if (Array.isArray(v)) return "array";
  return "object";
}

/**
 * Vertex noise from second differences. For each interior vertex, the distance d to the chord
 * through its two neighbours is measured. If every vertex carries independent noise of standard
 * deviation σ (per axis) and the true line is locally straight, d ≈ e_i − (e_{i−1} + e_{i+1})/2
 * along the normal, whose standard deviation is σ·√(1 + ¼ + ¼) = σ·√1.5; the median of |d|
 * is then 0.6745·σ·√1.5 (0.6745 = the normal distribution's third quartile). The median keeps
 * corners and curvature from dominating, but densely sampled tight curves still add their
 * sagitta, and coarse sampling with spacing near σ tilts the chords: the figure is an estimate
 * to start from, not a measurement. The suggested tolerance is 3σ (a three-sigma band, common
 * practice) rounded up to one significant digit.
 *
 * The distances go into a log-spaced histogram (20 bins per decade from 1 µm to 1000 km), so
 * memory does not grow with the input. Lines are sampled at most `MAX_TRIPLES_PER_PART` times.
 */
export class NoiseEstimator {
  private static readonly BINS_PER_DECADE = 20;
  private static readonly MIN_LOG = -6; // 1 µm
  private static readonly DECADES = 12; // up to 1000 km
  private static readonly MAX_TRIPLES_PER_PART = 2000;
  private readonly bins = new Float64Array(NoiseEstimator.BINS_PER_DECADE * NoiseEstimator.DECADES + 2);
  private count = 0;
  private zeros = 0;

  constructor(
    private metresPerUnit: number,
    private geographic: boolean,
  ) {}

  addLine(line: Position[], ring: boolean): void {
    const n = line.length - (ring ? 1 : 0);
    if (n < 3) return;
    const step = Math.max(1, Math.floor(n / NoiseEstimator.MAX_TRIPLES_PER_PART));
    const ky = this.metresPerUnit;
    const kx = this.geographic ? ky * Math.cos(((line[0]![1]! as number) * Math.PI) / 180) : ky;
    for (let i = 1; i < n - 1; i += step) {
      const a = line[i - 1]!;
      const b = line[i]!;
      const c = line[i + 1]!;
      const cx = (c[0]! - a[0]!) * kx;
      const cy = (c[1]! - a[1]!) * ky;
      const len = Math.hypot(cx, cy);
      if (len === 0) continue;
      const bx = (b[0]! - a[0]!) * kx;
      const by = (b[1]! - a[1]!) * ky;
      const d = Math.abs(cx * by - cy * bx) / len;
      this.addDistance(d);
    }
  }

  addDistance(d: number): void {
    this.count++;
    if (d <= 0) {
      this.zeros++;
      return;
    }
    const pos = (Math.log10(d) - NoiseEstimator.MIN_LOG) * NoiseEstimator.BINS_PER_DECADE;
    const bin = Math.min(this.bins.length - 1, Math.max(0, Math.floor(pos) + 1));
    this.bins[bin]! += 1;
  }

  estimate(): { metres: number; suggestedTolerance: number } | undefined {
    if (this.count < 3) return undefined;
    const half = this.count / 2;
    let seen = this.zeros;
    let median = 0;
    if (seen < half) {
      for (let b = 1; b < this.bins.length; b++) {
        seen += this.bins[b]!;
        if (seen >= half) {
          // Geometric centre of the bin.
          median = 10 ** (NoiseEstimator.MIN_LOG + (b - 0.5) / NoiseEstimator.BINS_PER_DECADE);
          break;
        }
      }
    }
    const sigma = median / (0.6745 * Math.sqrt(1.5));
    return { metres: roundSignificant(sigma, 3), suggestedTolerance: niceCeil(Math.max(3 * sigma, 0.001)) };
  }
}

function roundSignificant(v: number, digits: number): number {
  if (v === 0) return 0;
  return Number(v.toPrecision(digits));
}

/** v rounded up to one significant digit (6.09 → 7, 0.0123 → 0.02). */
export function niceCeil(v: number): number {
  const e = Math.floor(Math.log10(v));
  const unit = 10 ** e;
  return Number((Math.ceil(v / unit - 1e-9) * unit).toPrecision(6));
}

/**
 * Coordinate reference systems and local metric frames.
 *
 * Tolerance is a distance on the ground in metres (DESIGN.md). For a projected CRS the
 * coordinates are used as they are, scaled to metres when the CRS's unit is not the metre. For a
 * geographic CRS (longitude/latitude in degrees) each part is worked in a local affine frame:
 *   x = (λ − λ₀)·kx,  y = (φ − φ₀)·ky,
 * with kx and ky the largest east–west and north–south metres-per-degree over the part's
 * latitudes on the CRS's ellipsoid (prime vertical N(φ)cos φ and meridian M(φ) radii of
 * curvature; e.g. Snyder, *Map Projections — A Working Manual*, USGS PP 1395, eq. 4-18, 4-20).
 * Why affine rather than a map projection: Bézier curves are invariant under affine maps
 * (Farin, §3.3), so control points map back exactly and a curve fitted in the frame is the same
 * curve in longitude/latitude, and the input's edges stay straight in coordinate space as RFC
 * 7946 §3.1.1 reads them. Why the largest scale: frame lengths are then never shorter than ground
 * lengths, so a deviation within the tolerance in the frame is within it on the ground (the
 * frame is conservative by the spread of cos φ over the part, negligible for parts of a few
 * tens of kilometres).
 */
import proj4 from "proj4";
import type { Box, Point } from "./types";

export type CrsKind =
  | { kind: "geographic"; code: string; a: number; es: number }
  | { kind: "projected"; code: string; toMetre: number };

interface ProjLike {
  projName?: string;
  a?: number;
  b?: number;
  es?: number;
  rf?: number;
  to_meter?: number;
  units?: string;
}

/**
 * Describe a CRS code known to proj4 ("EPSG:4326", "EPSG:3857", …). WGS 84 / UTM codes
 * EPSG:326zz (north) and EPSG:327zz (south) are defined here when proj4 lacks them (the EPSG
 * numbering of those zones is common practice). Throws an Error naming the code when unknown.
 */
export function describeCrs(code: string): CrsKind {
  const norm = normaliseCode(code);
  ensureKnown(norm);
  let p: ProjLike;
  try {
    p = proj4.Proj(norm) as unknown as ProjLike;
  } catch {
    throw new Error(`unknown CRS "${code}": give an EPSG code proj4 knows, such as EPSG:4326 or EPSG:32633`);
  }
  if (!p || !p.projName) throw new Error(`unknown CRS "${code}": give an EPSG code proj4 knows, such as EPSG:4326 or EPSG:32633`);
  if (p.projName === "longlat") {
    const a = p.a ?? 6378137;
    const es = p.es ?? (p.b ? 1 - (p.b * p.b) / (a * a) : 0.0066943799901413165);
    return { kind: "geographic", code: norm, a, es };
  }
  const units = (p.units ?? "m").toLowerCase();
  const toMetre = p.to_meter ?? (units === "m" || units === "metre" || units === "meter" ? 1 : NaN);
  if (!(toMetre > 0)) throw new Error(`CRS "${code}" has unit "${p.units}", which cannot be converted to metres`);
  return { kind: "projected", code: norm, toMetre };
}

/** "epsg:4326", "EPSG::4326", "urn:ogc:def:crs:EPSG::4326" and OGC CRS84 → "EPSG:4326". */
export function normaliseCode(code: string): string {
  const c = code.trim();
  if (/^(urn:ogc:def:crs:)?OGC:(1\.3:)?CRS84$/i.test(c) || /crs84$/i.test(c)) return "EPSG:4326";
  const m = /EPSG:{1,2}(?:[\d.]*:)?(\d+)$/i.exec(c);
  if (m) return `EPSG:${m[1]}`;
  return c;
}

function ensureKnown(code: string): void {
  if (proj4.defs(code)) return;
  const m = /^EPSG:(32[67])(\d\d)$/.exec(code);
  if (m) {
    const zone = Number(m[2]);
    if (zone >= 1 && zone <= 60) proj4.defs(code, `+proj=utm +zone=${zone}${m[1] === "327" ? " +south" : ""} +datum=WGS84 +units=m +no_defs`);
  }
}

/** An affine map between the source CRS and a local frame in metres. */
export interface Frame {
  toLocal(p: readonly number[]): Point;
  toSource(p: readonly number[]): Point;
  /** Metres per source unit along x and y (for reporting). */
  kx: number;
  ky: number;
}

const DEG = Math.PI / 180;

/** The local metric frame for coordinates within `box` (see the module comment). */
export function localFrame(crs: CrsKind, box: Box): Frame {
  const x0 = 0.5 * (box[0] + box[2]);
  const y0 = 0.5 * (box[1] + box[3]);
  let kx: number;
  let ky: number;
  if (crs.kind === "projected") {
    kx = ky = crs.toMetre;
  } else {
    const latLo = Math.max(-90, Math.min(90, box[1]));
    const latHi = Math.max(-90, Math.min(90, box[3]));
    // N(φ)cos φ is largest at the latitude nearest the equator; M(φ) at the one nearest a pole.
    const nearEq = latLo <= 0 && latHi >= 0 ? 0 : Math.min(Math.abs(latLo), Math.abs(latHi));
    const nearPole = Math.max(Math.abs(latLo), Math.abs(latHi));
    const { a, es } = crs;
    const w = (phi: number) => 1 - es * Math.sin(phi * DEG) ** 2;
    kx = ((a / Math.sqrt(w(nearEq))) * Math.cos(nearEq * DEG)) * DEG;
    ky = ((a * (1 - es)) / w(nearPole) ** 1.5) * DEG;
  }
  return {
    kx,
    ky,
    toLocal: (p) => [(p[0] - x0) * kx, (p[1] - y0) * ky],
    toSource: (p) => [p[0] / kx + x0, p[1] / ky + y0],
  };
}

/** Whether every coordinate can be longitude/latitude. */
export function looksGeographic(box: Box): boolean {
  return box[0] >= -180 && box[2] <= 180 && box[1] >= -90 && box[3] <= 90;
}

export function boxOf(points: readonly (readonly number[])[]): Box {
  let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  for (const p of points) {
    if (p[0] < x0) x0 = p[0];
    if (p[0] > x1) x1 = p[0];
    if (p[1] < y0) y0 = p[1];
    if (p[1] > y1) y1 = p[1];
  }
  return [x0, y0, x1, y1];
}

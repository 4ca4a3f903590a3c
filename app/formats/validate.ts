import { DatasetInputError } from "./errors";
import type { GeoJSONFeature, LinearGeometry, Position } from "./types";

/**
 * Checks one parsed GeoJSON Feature (RFC 7946 §3.2) in place and decides what happens to it:
 *
 * - refused (throws `DatasetInputError`): a member of `features` that is no Feature, an unknown
 *   geometry type, wrong coordinate nesting, coordinates that are not finite numbers,
 *   longitude/latitude outside WGS 84's range (a sign of a projected file without a CRS),
 *   points (alone, or mixed with lines: "mixed geometry types") and geometry collections;
 * - skipped (a warning): no geometry (null is allowed by RFC 7946 §3.2), empty coordinates, and
 *   features whose every part is degenerate (a line with fewer than two distinct vertices, a
 *   ring with fewer than three);
 * - repaired (a warning): degenerate parts dropped while others remain; unclosed rings closed
 *   (RFC 7946 §3.1.6 requires the first and last positions of a ring to be equal).
 */
export interface CheckContext {
  file: string;
  /** Longitude/latitude ranges apply. */
  geographic: boolean;
  /** The geometry family seen first, and where. */
  family?: { kind: "line" | "area"; feature: number; type: string };
}

export type CheckResult =
  | { kind: "ok"; feature: GeoJSONFeature }
  | { kind: "repaired"; feature: GeoJSONFeature; note: string }
  | { kind: "skipped"; reason: string };

const LINE_TYPES = new Set(["LineString", "MultiLineString"]);
const AREA_TYPES = new Set(["Polygon", "MultiPolygon"]);

export function checkFeature(raw: unknown, index: number, ctx: CheckContext): CheckResult {
  const refuse = (reason: string, hint: string): never => {
    throw new DatasetInputError({ file: ctx.file, feature: index, reason, hint });
  };
  if (raw === null || typeof raw !== "object" || Array.isArray(raw)) {
    refuse(`is ${describeValue(raw)}, not a GeoJSON Feature object`, "Each feature must be a JSON object with \"type\": \"Feature\" (RFC 7946 §3.2)");
  }
  const obj = raw as Record<string, unknown>;
  if (obj.type !== "Feature") {
    refuse(`has "type": ${JSON.stringify(obj.type) ?? "missing"} where "Feature" is required`, "Each member of `features` must be a Feature object (RFC 7946 §3.3); wrap bare geometries in Features");
  }
  if (obj.properties !== undefined && obj.properties !== null && (typeof obj.properties !== "object" || Array.isArray(obj.properties))) {
    refuse(`"properties" is ${describeValue(obj.properties)}`, "Feature properties must be an object or null (RFC 7946 §3.2)");
  }
  const geometry = obj.geometry;
  if (geometry === null || geometry === undefined) return { kind: "skipped", reason: "the feature has no geometry (null)" };
  if (typeof geometry !== "object" || Array.isArray(geometry)) {
    refuse(`"geometry" is ${describeValue(geometry)}`, "A Feature's geometry must be a GeoJSON geometry object or null (RFC 7946 §3.2)");
  }
  const geom = geometry as Record<string, unknown>;
  const type = geom.type;
  if (type === "Point" || type === "MultiPoint") {
    if (ctx.family) {
      refuse(
        `mixed geometry types: this ${type} follows ${ctx.family.type} features (first at feature ${ctx.family.feature}); Lissom works on lines and area boundaries, not points`,
        "Remove the point features or move them to a separate file",
      );
    }
    refuse(`${type} geometry: Lissom works on lines and area boundaries, not points`, "Remove the point features or move them to a separate file");
  }
  if (type === "GeometryCollection") {
    refuse("GeometryCollection geometry is not supported", "Split the collection into one Feature per LineString/Polygon geometry");
  }
  if (typeof type !== "string" || (!LINE_TYPES.has(type) && !AREA_TYPES.has(type))) {
    refuse(`unknown geometry type ${JSON.stringify(type) ?? "(missing)"}`, "Use LineString, MultiLineString, Polygon or MultiPolygon (RFC 7946 §3.1)");
  }
  // Lines and areas may share a dataset (a Shapefile output then holds one layer of each).
  const kind = LINE_TYPES.has(type as string) ? "line" : "area";
  const coords = geom.coordinates;
  if (!Array.isArray(coords)) {
    refuse(`${type} has ${coords === undefined ? "no \"coordinates\" member" : `"coordinates" ${describeValue(coords)}`}`, "Give the geometry a coordinates array (RFC 7946 §3.1)");
  }
  const checker = new PositionChecker(ctx, index, type as string);
  const notes: string[] = [];
  let result: LinearGeometry | null;
  switch (type) {
    case "LineString": {
      const line = checker.line(coords as unknown[], "coordinates");
      result = line.length === 0 ? null : keepLine(line, notes, "the line") ? { type, coordinates: line } : null;
      break;
    }
    case "MultiLineString": {
      const lines = checker.array(coords, "coordinates").map((l, i) => checker.line(l, `coordinates[${i}]`));
      const kept = lines.filter((l, i) => l.length > 0 && keepLine(l, notes, `line ${i}`));
      result = kept.length ? { type, coordinates: kept } : null;
      break;
    }
    case "Polygon": {
      const rings = checker.array(coords, "coordinates").map((r, i) => checker.line(r, `coordinates[${i}]`));
      const kept = keepPolygon(rings, notes, "");
      result = kept ? { type, coordinates: kept } : null;
      break;
    }
    default: {
      const polygons = checker.array(coords, "coordinates").map((p, i) =>
        checker.array(p, `coordinates[${i}]`).map((r, j) => checker.line(r, `coordinates[${i}][${j}]`)),
      );
      const kept: Position[][][] = [];
      polygons.forEach((rings, i) => {
        const k = keepPolygon(rings, notes, `polygon ${i}: `);
        if (k) kept.push(k);
      });
      result = kept.length ? { type: "MultiPolygon", coordinates: kept } : null;
    }
  }
  if (!result) {
    const empty = checker.positions === 0;
    return { kind: "skipped", reason: empty ? `empty ${type} (no coordinates)` : `${notes.join("; ")}; nothing usable remains` };
  }
  if (!ctx.family) ctx.family = { kind, feature: index, type: type as string };
  obj.geometry = result;
  if (obj.properties === undefined) obj.properties = null;
  const feature = obj as unknown as GeoJSONFeature;
  return notes.length ? { kind: "repaired", feature, note: notes.join("; ") } : { kind: "ok", feature };
}

/** Keeps a line with at least two distinct vertices; otherwise notes why it goes. */
function keepLine(line: Position[], notes: string[], label: string): boolean {
  if (distinctCount(line, 2) >= 2) return true;
  notes.push(`${label} has ${line.length === 1 ? "only one vertex" : "fewer than two distinct vertices"} and was dropped`);
  return false;
}

/** Closes open rings; drops degenerate rings (a degenerate exterior drops the polygon). */
function keepPolygon(rings: Position[][], notes: string[], prefix: string): Position[][] | null {
  if (rings.length === 0) return null;
  const kept: Position[][] = [];
  for (let i = 0; i < rings.length; i++) {
    const ring = rings[i]!;
    const label = `${prefix}${i === 0 ? "exterior ring" : `ring ${i}`}`;
    if (ring.length === 0) {
      notes.push(`${label} is empty and was dropped`);
      if (i === 0) return null;
      continue;
    }
    if (distinctCount(ring, 3) < 3) {
      notes.push(`${label} has fewer than three distinct vertices and was dropped${i === 0 ? " with its polygon" : ""}`);
      if (i === 0) return null;
      continue;
    }
    const first = ring[0]!;
    const last = ring[ring.length - 1]!;
    if (first[0] !== last[0] || first[1] !== last[1]) {
      ring.push(first.slice());
      notes.push(`${label} was not closed and was closed (RFC 7946 §3.1.6)`);
    }
    kept.push(ring);
  }
  return kept;
}

function distinctCount(line: Position[], enough: number): number {
  const seen: Position[] = [];
  for (const p of line) {
    if (!seen.some((q) => q[0] === p[0] && q[1] === p[1])) {
      seen.push(p);
      if (seen.length >= enough) break;
    }
  }
  return seen.length;
}

class PositionChecker {
  positions = 0;
  constructor(
    private ctx: CheckContext,
    private index: number,
    private type: string,
  ) {}

  private refuse(reason: string, hint: string): never {
    throw new DatasetInputError({ file: this.ctx.file, feature: this.index, reason, hint });
  }

  array(value: unknown, path: string): unknown[] {
    if (!Array.isArray(value)) this.nesting(path, value);
    return value as unknown[];
  }

  private nesting(path: string, value: unknown): never {
    return this.refuse(
      `wrong coordinate nesting in ${this.type}: ${path} is ${describeValue(value)}`,
      `A ${this.type} needs ${NESTING[this.type]} (RFC 7946 §3.1); check the array depth`,
    );
  }

  /** Validates an array of positions in place. */
  line(value: unknown, path: string): Position[] {
    if (!Array.isArray(value)) this.nesting(path, value);
    const line = value as unknown[];
    const geographic = this.ctx.geographic;
    for (let i = 0; i < line.length; i++) {
      const p = line[i];
      if (!Array.isArray(p) || p.length < 2 || Array.isArray(p[0])) this.nesting(`${path}[${i}]`, p);
      const pos = p as unknown[];
      for (let k = 0; k < pos.length; k++) {
        const v = pos[k];
        if (typeof v !== "number" || !Number.isFinite(v)) {
          this.refuse(
            `coordinate ${path}[${i}][${k}] is ${describeValue(v)}, not a finite number`,
            typeof v === "string" ? "Write coordinates as JSON numbers, not strings" : "Every ordinate must be a finite JSON number; remove or fix this vertex",
          );
        }
      }
      if (geographic) {
        const x = pos[0] as number;
        const y = pos[1] as number;
        if (x < -180 || x > 180 || y < -90 || y > 90) {
          this.refuse(
            `coordinate ${path}[${i}] = [${x}, ${y}] is outside WGS 84 longitude/latitude range (±180, ±90)`,
            "If the file is in a projected CRS, state it (the crs option, e.g. EPSG:27700) or reproject to WGS 84 longitude/latitude as RFC 7946 requires",
          );
        }
      }
    }
    this.positions += line.length;
    return line as Position[];
  }
}

const NESTING: Record<string, string> = {
  LineString: "an array of positions [[x, y], ...]",
  MultiLineString: "an array of lines [[[x, y], ...], ...]",
  Polygon: "an array of rings [[[x, y], ...], ...]",
  MultiPolygon: "an array of polygons [[[[x, y], ...], ...], ...]",
};

export function describeValue(v: unknown): string {
  if (v === null) return "null";
  if (v === undefined) return "missing";
  if (Array.isArray(v)) return v.length === 0 ? "an empty array" : `an array (${shortJson(v)})`;
  if (typeof v === "string") return `the string ${JSON.stringify(v.length > 40 ? v.slice(0, 40) + "…" : v)}`;
  if (typeof v === "number") return String(v);
  if (typeof v === "object") return "an object";
  return `${typeof v} ${String(v)}`;
}

function shortJson(v: unknown): string {
  const s = JSON.stringify(v);
  return s.length > 40 ? s.slice(0, 40) + "…" : s;
}

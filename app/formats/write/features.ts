import type { FeatureCurves, GeoJSONFeature, LinearGeometry, Position } from "../types";

/**
 * Checks that a value handed to a writer is a Feature with a linear geometry. Anything else is a
 * fault upstream (the step runners), not of the user's file, so it throws a plain Error.
 */
export function asFeature(value: unknown, position: number): GeoJSONFeature {
  const f = value as Partial<GeoJSONFeature> | null;
  if (!f || typeof f !== "object" || !f.geometry || typeof f.geometry !== "object" || !Array.isArray((f.geometry as LinearGeometry).coordinates)) {
    throw new Error(`writer received item ${position} without a geometry (${JSON.stringify(value)?.slice(0, 80)})`);
  }
  return f as GeoJSONFeature;
}

/** The parts of a geometry in order: each LineString, each ring (across polygons). */
export function partsOf(g: LinearGeometry): Position[][] {
  switch (g.type) {
    case "LineString":
      return [g.coordinates];
    case "MultiLineString":
    case "Polygon":
      return g.coordinates;
    case "MultiPolygon":
      return g.coordinates.flat();
  }
}

export function vertexCount(g: LinearGeometry): number {
  let n = 0;
  for (const p of partsOf(g)) n += p.length;
  return n;
}

export function segmentCount(curves: FeatureCurves | undefined): number {
  let n = 0;
  if (Array.isArray(curves)) for (const part of curves) n += part.length;
  return n;
}

/** The geometry family of a feature: lines or areas. */
export function familyOf(g: LinearGeometry): "line" | "area" {
  return g.type === "LineString" || g.type === "MultiLineString" ? "line" : "area";
}

/**
 * RFC 7946 §3.1.6: exterior rings counter-clockwise, holes clockwise. Reverses rings that wind
 * the other way (Shapefile input winds the opposite way), with their `curves` part (segments in
 * reverse order, each segment's control points reversed) and `measures` part.
 */
export function rewindRfc7946(input: GeoJSONFeature): GeoJSONFeature {
  const g0 = input.geometry;
  if (g0.type !== "Polygon" && g0.type !== "MultiPolygon") return input;
  const rings0 = g0.type === "Polygon" ? [g0.coordinates] : g0.coordinates;
  if (rings0.every((rings) => rings.every((ring, i) => ringArea(ring) > 0 === (i === 0)))) return input;
  // Only a feature that needs rewinding is copied; the caller's object stays as it was.
  const f = structuredClone(input);
  const g = f.geometry as typeof g0;
  const polygons = g.type === "Polygon" ? [g.coordinates] : g.coordinates;
  let part = 0;
  for (const rings of polygons) {
    for (let i = 0; i < rings.length; i++, part++) {
      const ring = rings[i]!;
      const ccw = ringArea(ring) > 0;
      if (ccw === (i === 0)) continue;
      ring.reverse();
      const curves = Array.isArray(f.curves) ? f.curves[part] : undefined;
      if (curves) {
        curves.reverse();
        for (const seg of curves) seg.reverse();
      }
      const measures = Array.isArray(f.measures) ? (f.measures as unknown[])[part] : undefined;
      if (Array.isArray(measures)) measures.reverse();
    }
  }
  return f;
}

/** Shoelace area, positive for counter-clockwise rings with y up. */
export function ringArea(ring: Position[]): number {
  let a = 0;
  for (let i = 0, n = ring.length, j = n - 1; i < n; j = i++) a += (ring[j]![0]! - ring[i]![0]!) * (ring[j]![1]! + ring[i]![1]!);
  return a / 2;
}

/** Whether a part is a ring (polygon geometry). */
export function partIsRing(g: LinearGeometry): boolean {
  return g.type === "Polygon" || g.type === "MultiPolygon";
}

/** Whether the outputs draw each feature's input beside its result (SVG's input layer). */
export function wantsInputLayer(formats: readonly string[]): boolean {
  return formats.includes("svg");
}

/** Keeps a feature's input geometry on its result, for SVG's input layer; other writers leave it out. */
export function keepInputGeometry(result: object, input: object): void {
  (result as { inputGeometry?: unknown }).inputGeometry = (input as { geometry?: unknown }).geometry;
}

/** The members a writer puts out for a feature: no `inputGeometry` (that one is for SVG's input layer). */
export function outputMembers(f: GeoJSONFeature): Record<string, unknown> {
  const { type: _t, id, properties, geometry, curves, inputGeometry: _i, ...rest } = f;
  const out: Record<string, unknown> = { type: "Feature" };
  if (id !== undefined) out.id = id;
  out.properties = properties ?? null;
  out.geometry = geometry;
  if (curves !== undefined) out.curves = curves;
  return Object.assign(out, rest);
}

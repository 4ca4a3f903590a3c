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

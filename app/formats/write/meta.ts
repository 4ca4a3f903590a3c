import type { OutputFormat } from "../types";

/**
 * Metadata every output carries (DESIGN.md, "Safety"): the tolerance, the steps that made it and
 * the source dataset. Extra members pass through unchanged.
 */
export interface OutputMeta {
  /** Ground tolerance in metres of the step that set one (`fit`, `discretise`), or null. */
  tolerance_m?: number | null;
  /** The job definition's steps, with their parameters. */
  steps?: unknown[];
  /** The source dataset (name, version, file names). */
  source?: { dataset?: string; version?: number; file?: string; [k: string]: unknown };
  /** The caution shown with every output. */
  caution?: string;
  /** CRS of the coordinates (a code `resolveCrs` accepts); default EPSG:4326. */
  crs?: string;
  /** The source's .prj WKT, written back into a Shapefile output's .prj when the CRS is the same. */
  crsWkt?: string;
  /** Title for SVG and GML documents. */
  title?: string;
  [member: string]: unknown;
}

export const DEFAULT_CAUTION =
  "Approximation within the stated tolerance. Not for legal boundary definition or for locating buried utilities; defer to local survey codes and licensed surveyors.";

export interface WriteResult {
  format: OutputFormat;
  /** Every file written, main file first (a sidecar metadata file follows where the format has no place for metadata). */
  files: string[];
  mediaType: string;
  features: number;
  /** Vertices of the discretised geometry written. */
  vertices: number;
  /** Bézier segments written (GML, SVG, CSV, and GeoJSON's `curves`). */
  segments: number;
  bytes: number;
  /** Notes on what a format could not hold (Z dropped in SVG, long attributes cut in .dbf). */
  notes: string[];
}

/** The metadata as written into files: the caller's members plus the format and a timestamp. */
export function metadataDocument(meta: OutputMeta, format: OutputFormat, notes: string[] = []): Record<string, unknown> {
  return {
    ...meta,
    caution: meta.caution ?? DEFAULT_CAUTION,
    crs: meta.crs ?? "EPSG:4326",
    format,
    written: new Date().toISOString(),
    ...(notes.length ? { notes } : {}),
  };
}

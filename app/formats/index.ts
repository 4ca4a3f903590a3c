/**
 * The format layer: files in, streams of features out, and back.
 *
 * ## Reading
 *
 *   inspectDataset(files, options?) : Promise<DatasetSummary>
 *   readFeatures(files, options?)   : AsyncIterable<{ index, feature, repaired? }>
 *
 * `files` is what one upload holds, each `{ path, name }` (`path` on disk, `name` as the user
 * gave it, used for messages and to pick the reader): one GeoJSON file (`.geojson`, `.json`),
 * one newline-delimited GeoJSON file (`.ndjson`, `.geojsonl`, `.jsonl`), one GeoJSON text
 * sequence (RFC 8142, `.geojsons`), one `.zip` holding a Shapefile, or the loose parts of one
 * Shapefile (`.shp` with `.shx`, `.dbf`, `.prj`, `.cpg`). `options.crs` (an EPSG code) states
 * the CRS where the file does not, or overrides it; `options.onWarning` hears each skipped or
 * repaired feature as it happens.
 *
 * Both functions stream: memory is bounded by the largest single feature, not the file.
 * `inspectDataset` reads everything once and returns the summary (counts, geometry types, CRS,
 * bounding box, attribute types, noise estimate, warnings); `readFeatures` yields the usable
 * features in input order with their 0-based input index (skipped features leave a gap in the
 * indexes; repaired ones carry `repaired`, a description of what was done).
 *
 * Refusals: both throw `DatasetInputError` (see `errors.ts`) for a file that must be refused;
 * its `message` is one line, `<file>: feature <n> (byte <offset>): <reason>. <hint>`, and its
 * fields (`file`, `feature`, `offset`, `reason`, `hint`) are there for structured answers.
 * Any other error is a fault of Lissom, not of the file. Malformed features inside an
 * otherwise good file are skipped or repaired, each with a warning naming the feature; a
 * dataset with no usable feature left is refused.
 *
 * Limits: `MAX_UPLOAD_BYTES` (from `LISSOM_MAX_UPLOAD_MB`, default 2048 MB) for each uploaded
 * file; zip archives are capped by `MAX_UNPACKED_FACTOR` × that limit and a per-entry
 * compression ratio of `MAX_COMPRESSION_RATIO`; one GeoJSON feature may be up to
 * `MAX_FEATURE_BYTES`.
 */
export { DatasetInputError, formatInputMessage } from "./errors";
export { inspectDataset, readFeatures } from "./read";
export { resolveCrs, normaliseCrsCode, type ResolvedCrs } from "./crs";
export { ACCEPTED_EXTENSIONS, INPUT_EXTENSIONS, formatBytes } from "./detect";
export { DEFAULT_MAX_UPLOAD_BYTES, MAX_UPLOAD_BYTES, MAX_UNPACKED_FACTOR, MAX_COMPRESSION_RATIO, MAX_FEATURE_BYTES, maxUploadBytes } from "./limits";
export type {
  ControlPoint,
  CrsSummary,
  CurveSegment,
  DatasetSummary,
  DatasetWarning,
  FeatureCurves,
  FeatureItem,
  GeoJSONFeature,
  InputFile,
  InputFormat,
  LinearGeometry,
  LinearGeometryType,
  OutputFormat,
  Position,
  ReadOptions,
} from "./types";

/*
 * ## Writing
 *
 *   writeOutput(format, features, destPath, meta?) : Promise<WriteResult>
 *
 * `format` is one of `geojson`, `ndjson`, `shapefile` (a .zip), `gml`, `svg`, `csv`
 * (`outputFormatForPath` picks it from a file name); `features` is an async iterable of
 * GeoJSON Features in input order, as the step runners produce them (discretised `geometry`,
 * optional `curves` member, `properties`); `meta` (`OutputMeta`) carries the tolerance, the
 * steps, the source dataset and the CRS, and ends up in every output. The files are written
 * under temporary names and renamed into place only once complete; on any error nothing is
 * left. The result lists every file written (main file first), counts and notes.
 */
export { writeOutput, outputFormatForPath, sidecarPath, OUTPUT_EXTENSIONS, OUTPUT_MEDIA_TYPES } from "./write/index";
export type { OutputMeta, WriteResult } from "./write/index";
export { DEFAULT_CAUTION } from "./write/meta";

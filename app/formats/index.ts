/**
 * The format layer: uploaded files in, streams of GeoJSON features out, and features back into
 * files. No framework and no database here: the upload route, the worker, the CLI and the
 * console's datasets area all call these functions.
 *
 * ## Reading
 *
 *   inspectDataset(files: InputFile[], options?: ReadOptions): Promise<DatasetSummary>
 *   readFeatures(files: InputFile[], options?: ReadOptions): AsyncGenerator<FeatureItem>
 *     InputFile   = { path: string; name: string }
 *     ReadOptions = { crs?: string; maxUploadBytes?: number; onWarning?: (w: DatasetWarning) => void }
 *     FeatureItem = { index: number; feature: GeoJSONFeature; repaired?: string }
 *
 * `files` is what one upload holds; `path` is where the bytes are, `name` is the user's file
 * name (it picks the reader and appears in every message, so pass the original name, not a
 * storage name). Accepted: one GeoJSON file (`.geojson`, `.json`: FeatureCollection, Feature
 * or bare geometry), one newline-delimited GeoJSON file (`.ndjson`, `.geojsonl`, `.jsonl`),
 * one GeoJSON text sequence (RFC 8142, `.geojsons`), one `.zip` (a Shapefile, or one GeoJSON
 * file, folders inside are fine), or the loose parts of one Shapefile (`.shp` + `.shx` +
 * `.dbf`, with `.prj` and `.cpg`; index and metadata side files are accepted and ignored).
 * `ACCEPTED_EXTENSIONS` is the list for a file picker's `accept`.
 *
 * Both functions stream (memory is bounded by the largest single feature, never the file):
 * `inspectDataset` reads everything once and returns the `DatasetSummary` (format, features,
 * parts, vertices, geometry types, CRS with its source, bounding box, attribute types, noise
 * estimate with a suggested tolerance, Z/M flags, .dbf encoding, warnings); `readFeatures`
 * yields the usable features in input order with their 0-based input index; skipped features
 * leave a gap in the indexes (the summary's warnings name them), repaired ones carry
 * `repaired`. Call `readFeatures` with `{ crs: summary.crs.code }` to read exactly as the
 * inspection did.
 *
 * Features: `geometry` is a LineString, MultiLineString, Polygon or MultiPolygon; a dataset
 * may hold lines and polygons together, but points (alone or mixed in) and geometry
 * collections are refused. Z is the third ordinate of positions; Shapefile M values travel in
 * the feature's `measures` member (per part, per vertex). Coordinates stay in the dataset's
 * CRS: `summary.crs.code` is `EPSG:<n>` (or `WKT:<name>` for a .prj without authority), and
 * `resolveCrs(code)` says whether it is geographic, its metres per unit and its proj4 name
 * (`converter(from, to)` maps positions between two resolved CRSs).
 *
 * Refusals: both throw `DatasetInputError` for input that must be refused, before or while
 * streaming; its `message` is one line, `<file>: feature <n> (byte <offset>): <reason>.
 * <hint>` (the feature and byte parts when known), fit for a CLI's stderr or an API answer,
 * and `toJSON()` gives `{ file, feature, offset, reason, hint, message }`. Any other error is
 * a fault of Lissom, not of the file. Malformed features inside a good file are skipped or
 * repaired with a warning naming the feature; a dataset with no usable feature left is refused.
 *
 * Limits: `MAX_UPLOAD_BYTES` per uploaded file (from `LISSOM_MAX_UPLOAD_MB`, default 2048 MB;
 * upload routes should stop receiving past it); a zip may unpack to `MAX_UNPACKED_FACTOR` ×
 * that, no entry beyond `MAX_COMPRESSION_RATIO`:1, at most `MAX_ZIP_ENTRIES` entries; one
 * GeoJSON feature or NDJSON line may be up to `MAX_FEATURE_BYTES`.
 *
 * ## Writing
 *
 *   writeOutput(format: OutputFormat, features: AsyncIterable<object>, destPath: string, meta?: OutputMeta): Promise<WriteResult>
 *     OutputFormat = "geojson" | "ndjson" | "shapefile" | "gml" | "svg" | "csv"
 *     OutputMeta   = { tolerance_m?, steps?, source?, caution?, crs?, crsWkt?, title?, ...more }
 *     WriteResult  = { format, files, mediaType, features, vertices, segments, bytes, notes }
 *
 * `features` are GeoJSON Features in input order as the step runners produce them:
 * `geometry` (the discretised curve), optional `curves` (per part, per segment, the control
 * points; degree = points − 1), `properties`, optional `measures`, and for SVG's input layer
 * optional `inputGeometry`. `outputFormatForPath(path)` picks the format from a file name
 * (`.geojson .ndjson .zip .gml .svg .csv`). `meta` ends up in every output: GeoJSON's
 * `metadata` member, a `<name>.metadata.json` inside the Shapefile zip, GML's
 * `gml:metaDataProperty`, SVG's `<metadata>`, and a sidecar `<dest>.metadata.json` beside
 * NDJSON and CSV files (listed in `WriteResult.files`, main file first). `meta.crs` (default
 * EPSG:4326) sets the .prj, GML's `srsName` and GeoJSON's `crs` member for projected output;
 * the caution of DESIGN.md is added when `meta.caution` is absent. Files are written under
 * temporary names beside `destPath` and renamed into place only when complete: on any error
 * (including one thrown by the feature iterable) nothing is left behind.
 */
export { DatasetInputError, formatInputMessage } from "./errors";
export { inspectDataset, readFeatures } from "./read";
export { converter, normaliseCrsCode, resolveCrs, wktFor, type ResolvedCrs } from "./crs";
export { ACCEPTED_EXTENSIONS, INPUT_EXTENSIONS, formatBytes } from "./detect";
export {
  DEFAULT_MAX_UPLOAD_BYTES,
  MAX_COMPRESSION_RATIO,
  MAX_FEATURE_BYTES,
  MAX_UNPACKED_FACTOR,
  MAX_UPLOAD_BYTES,
  MAX_ZIP_ENTRIES,
  maxUploadBytes,
} from "./limits";
export { DEFAULT_DBF_ENCODING } from "./shapefile/encoding";
export { writeOutput, outputFormatForPath, sidecarPath, OUTPUT_EXTENSIONS, OUTPUT_MEDIA_TYPES } from "./write/index";
export type { OutputMeta, WriteResult } from "./write/index";
export { DEFAULT_CAUTION } from "./write/meta";
export { keepInputGeometry, wantsInputLayer } from "./write/features";
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

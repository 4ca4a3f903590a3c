/**
 * Plain data types of the format layer. Coordinates stay in the dataset's CRS; a position is
 * `[x, y]`, `[x, y, z]` or `[x, y, z, m]` (Z and M are carried, never dropped silently).
 */

export type Position = number[];

export interface LineStringGeometry {
  type: "LineString";
  coordinates: Position[];
}
export interface MultiLineStringGeometry {
  type: "MultiLineString";
  coordinates: Position[][];
}
export interface PolygonGeometry {
  type: "Polygon";
  coordinates: Position[][];
}
export interface MultiPolygonGeometry {
  type: "MultiPolygon";
  coordinates: Position[][][];
}

/** The geometries Lissom works on: lines and the boundaries of areas. */
export type LinearGeometry = LineStringGeometry | MultiLineStringGeometry | PolygonGeometry | MultiPolygonGeometry;
export type LinearGeometryType = LinearGeometry["type"];

/** A control point `[x, y]` (or `[x, y, z]`); a segment of degree n has n + 1 of them. */
export type ControlPoint = number[];
/** One Bézier segment: its control points, from start point to end point. */
export type CurveSegment = ControlPoint[];
/** Per part (per LineString, per ring in order, across polygons), the list of its segments. */
export type FeatureCurves = CurveSegment[][];

export interface GeoJSONFeature {
  type: "Feature";
  id?: string | number;
  properties: Record<string, unknown> | null;
  geometry: LinearGeometry;
  /** Foreign member written by `fit`/`elevate` (DESIGN.md, "Geometry contracts"). */
  curves?: FeatureCurves;
  /** M (measure) values per part and vertex, from Shapefile input (positions hold x, y, Z only). */
  measures?: number[][];
  /** For SVG output's input layer: the geometry before the steps (not written by other formats). */
  inputGeometry?: LinearGeometry;
  [member: string]: unknown;
}

export type InputFormat = "geojson" | "ndjson" | "geojsonseq" | "shapefile";
export type OutputFormat = "geojson" | "ndjson" | "shapefile" | "gml" | "svg" | "csv";

export interface CrsSummary {
  /** An identifier `resolveCrs` accepts again: `EPSG:4326`, `EPSG:27700`, or `WKT:<name>` for a .prj without an authority code. */
  code: string;
  /** Where the CRS came from: RFC 7946's default, the legacy `crs` member, a .prj file, the caller's option, or assumed (a Shapefile without .prj whose coordinates fit longitude/latitude). */
  source: "rfc7946" | "crs-member" | "prj" | "option" | "assumed";
  /** True when the file declared its CRS in a way RFC 7946 no longer allows (the `crs` member). */
  nonStandard?: boolean;
  /** Human-readable name (from the .prj WKT or the definition). */
  name?: string;
  /** True for longitude/latitude CRSs. */
  geographic?: boolean;
  /** The .prj WKT as found (Shapefile input only). */
  wkt?: string;
}

export interface DatasetWarning {
  /** 0-based feature index in input order, when the warning is about one feature. */
  feature?: number;
  message: string;
  /** What was done: the feature was skipped, repaired and kept, or this is a note only. */
  action?: "skipped" | "repaired" | "note";
}

export interface DatasetSummary {
  format: InputFormat;
  /** Features that will be processed (skipped features are not counted; see `skipped`). */
  features: number;
  /** Parts: LineStrings of lines, rings of polygons. */
  parts: number;
  vertices: number;
  geometryTypes: Record<string, number>;
  crs: CrsSummary;
  bbox: [number, number, number, number] | null;
  /** Attribute name -> type (`string`, `number`, `integer`, `boolean`, `date`, `object`, `array`, `mixed`, `null`). */
  attributes: Record<string, string>;
  /** Robust estimate of the vertex noise (metres, one standard deviation) and a tolerance to start from. */
  noiseEstimate?: { metres: number; suggestedTolerance: number };
  /** Malformed features skipped or repaired, and notes (non-standard CRS member, encodings). */
  warnings: DatasetWarning[];
  /** Features skipped as malformed (each has a warning). */
  skipped?: number;
  /** Whether any position carries Z, and M (Shapefile M values; GeoJSON 4th element). */
  hasZ?: boolean;
  hasM?: boolean;
  /** Attribute text encoding (Shapefile .dbf). */
  encoding?: string;
  /** Files that made up the dataset, as named by the user. */
  files?: string[];
}

export interface InputFile {
  /** Where the bytes are on disk. */
  path: string;
  /** The name the user gave the file (used in messages and to pick the reader). */
  name: string;
}

export interface ReadOptions {
  /** The CRS to assume (e.g. `EPSG:27700`); it overrides what the file declares, with a note. */
  crs?: string;
  /** Largest accepted file, in bytes; default `MAX_UPLOAD_BYTES`. */
  maxUploadBytes?: number;
  /** Told about every skipped or repaired feature while reading. */
  onWarning?: (warning: DatasetWarning) => void;
}

export interface FeatureItem {
  /** 0-based position of the feature in the input. */
  index: number;
  feature: GeoJSONFeature;
  /** Set when the feature was repaired on reading (what was done). */
  repaired?: string;
}

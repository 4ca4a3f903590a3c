import { createReadStream } from "node:fs";
import { resolveCrs, type ResolvedCrs } from "../crs";
import { DatasetInputError } from "../errors";
import { FeatureGate, type ReaderSink } from "../gate";
import { MAX_FEATURE_BYTES } from "../limits";
import type { CrsSummary, FeatureItem, InputFile, ReadOptions } from "../types";
import { describeValue } from "../validate";
import { JsonStream, JsonStreamError, type JsonPiece } from "./json-stream";

/**
 * Read size for GeoJSON files. The features one chunk completes are held until the consumer has
 * taken them; with 1 MiB chunks they outlived V8's young-generation collections and were
 * promoted, so the heap grew (npm run bench, 2 M vertices: 0.51× JSON.parse, 278 MB peak);
 * with 64 KiB chunks they die young (1.13×, 138 MB).
 */
const CHUNK_BYTES = 1 << 16;

const GEOMETRY_TYPES = new Set(["Point", "MultiPoint", "LineString", "MultiLineString", "Polygon", "MultiPolygon", "GeometryCollection"]);

const RECORD_SEPARATOR = 0x1e;

/**
 * Reads one GeoJSON text (RFC 7946) through `@loaders.gl/json`'s streaming tokenizer
 * (`json-stream.ts`): a FeatureCollection (streamed feature by feature), a single Feature, or a
 * bare geometry (wrapped in a Feature with null properties). The legacy `crs` member (GeoJSON
 * 2008, removed by RFC 7946 §4) is honoured when it comes before `features`, and reported as
 * non-standard.
 */
export async function* readGeoJSON(file: InputFile, options: ReadOptions, sink: ReaderSink): AsyncGenerator<FeatureItem> {
  const stream = new JsonStream("document", MAX_FEATURE_BYTES);
  const root: Record<string, unknown> = {};
  let rootValue: unknown;
  let gate: FeatureGate | null = null;
  let sawFeatures = false;
  let multiline = false;

  const fail = (reason: string, hint: string, feature?: number, offset?: number): never => {
    throw new DatasetInputError({ file: file.name, reason, hint, feature, offset });
  };

  const openGate = (): FeatureGate => {
    if (gate) return gate;
    const { summary, resolved } = geojsonCrs(file.name, root.crs, options);
    sink.crs(summary, resolved);
    if (summary.nonStandard && summary.source === "option") {
      sink.warn({ message: `the file's "crs" member says ${describeCrsMember(root.crs)}; the CRS given for the dataset (${summary.code}) is used instead`, action: "note" });
    } else if (summary.nonStandard) {
      sink.warn({ message: `the file declares its CRS with the "crs" member (${describeCrsMember(root.crs)}), which RFC 7946 §4 removed; it was honoured as ${summary.code}`, action: "note" });
    }
    gate = new FeatureGate(file.name, resolved, sink, multiline ? (i) => `line ${lineOf.get(i) ?? "?"}` : undefined);
    return gate;
  };
  // Feature index -> line, for messages in files laid out over several lines.
  const lineOf = new Map<number, number>();

  function* take(pieces: JsonPiece[]): Generator<FeatureItem> {
    for (const piece of pieces) {
      if (piece.kind === "member") {
        root[piece.key] = piece.value;
        if (piece.key === "type" && typeof piece.value === "string" && piece.value !== "FeatureCollection" && sawFeatures) {
          fail(`the root has a "features" array but "type" is ${JSON.stringify(piece.value)}`, 'A file with a "features" array must be a FeatureCollection (RFC 7946 §3.3)');
        }
        if (piece.key === "features") {
          fail(`"features" is ${describeValue(piece.value)}, not an array`, 'A FeatureCollection\'s "features" must be an array of Feature objects (RFC 7946 §3.3)');
        }
        if (piece.key === "crs" && gate && !options.crs) {
          fail('the "crs" member comes after the features, so the features were read as WGS 84', 'Move the "crs" member before "features", or give the CRS as an EPSG code (the crs option)');
        }
      } else if (piece.kind === "features-open") {
        sawFeatures = true;
        if (root.type !== undefined && root.type !== "FeatureCollection") {
          fail(`the root has a "features" array but "type" is ${JSON.stringify(root.type)}`, 'A file with a "features" array must be a FeatureCollection (RFC 7946 §3.3)');
        }
        openGate();
      } else if (piece.kind === "feature") {
        lineOf.clear();
        lineOf.set(piece.index, piece.line);
        const item = openGate().accept(piece.value, piece.index);
        if (item) yield item;
      } else {
        rootValue = piece.value;
      }
    }
  }

  try {
    for await (const chunk of createReadStream(file.path, { highWaterMark: CHUNK_BYTES })) {
      const bytes = chunk as Buffer;
      if (!multiline && !gate && bytes.includes(0x0a)) multiline = true;
      yield* take(stream.push(bytes));
      stream.check();
    }
    yield* take(stream.end());
    stream.check();
  } catch (error) {
    if (error instanceof JsonStreamError) fail(located(error, multiline), error.hint, error.unit, error.offset);
    throw error;
  }

  if (sawFeatures) {
    if (root.type === undefined) fail('the root object has "features" but no "type" member', 'Add "type": "FeatureCollection" (RFC 7946 §3.3)');
    openGate().finish();
    return;
  }
  // A single Feature or a bare geometry.
  const type = root.type;
  if (type === "FeatureCollection") fail('the FeatureCollection has no "features" array', 'Add a "features" array of Feature objects (RFC 7946 §3.3)');
  if (typeof type !== "string") {
    fail(
      type === undefined ? 'the JSON object has no "type" member, so it is not GeoJSON' : `"type" is ${describeValue(type)}`,
      "GeoJSON needs a root object with \"type\" FeatureCollection, Feature or a geometry type (RFC 7946 §3)",
    );
  }
  let raw: unknown;
  if (type === "Feature") raw = rootValue;
  else if (GEOMETRY_TYPES.has(type as string)) raw = { type: "Feature", properties: null, geometry: rootValue };
  else fail(`"type" is ${JSON.stringify(type)}, which is not a GeoJSON type`, "GeoJSON's root must be a FeatureCollection, a Feature or a geometry (RFC 7946 §3)");
  lineOf.set(0, 1);
  const item = openGate().accept(raw, 0);
  if (item) yield item;
  openGate().finish();
}

/** Adds the line to a syntax problem when the text has lines to count. */
function located(error: JsonStreamError, multiline: boolean): string {
  return multiline ? `line ${error.line}: ${error.reason}` : error.reason;
}

/**
 * Newline-delimited GeoJSON (one Feature per line) and GeoJSON text sequences (RFC 8142: each
 * text starts with the record separator 0x1E and ends with a line feed), both read as a sequence
 * of JSON values through the same tokenizer. A record may hold a Feature, a bare geometry
 * (wrapped), or a FeatureCollection (its features taken in order). Blank lines are ignored.
 * RFC 8142 §2.4: a last text cut short is skipped with a warning rather than refused.
 */
export async function* readJsonLines(file: InputFile, options: ReadOptions, sink: ReaderSink, sequence: boolean): AsyncGenerator<FeatureItem> {
  const { summary, resolved } = geojsonCrs(file.name, undefined, options);
  sink.crs(summary, resolved);
  const gate = new FeatureGate(file.name, resolved, sink, (i) => `line ${lineOf.get(i) ?? "?"}`);
  // Feature index -> line number, for messages; only the current feature's entry is kept.
  const lineOf = new Map<number, number>();
  const stream = new JsonStream("sequence", MAX_FEATURE_BYTES);
  let index = 0;

  function* take(pieces: JsonPiece[]): Generator<FeatureItem> {
    for (const piece of pieces) {
      if (piece.kind !== "root") continue;
      // Anything that is not an object (null, a number, text) goes to the gate, which names it.
      const value = (piece.value !== null && typeof piece.value === "object" ? piece.value : {}) as Record<string, unknown>;
      const parts: unknown[] =
        value.type === "FeatureCollection" && Array.isArray(value.features)
          ? (value.features as unknown[])
          : typeof value.type === "string" && GEOMETRY_TYPES.has(value.type)
            ? [{ type: "Feature", properties: null, geometry: value }]
            : [piece.value];
      for (const raw of parts) {
        lineOf.clear();
        lineOf.set(index, piece.line);
        const item = gate.accept(raw, index);
        index++;
        if (item) yield item;
      }
    }
  }

  const hint = sequence ? "Each text of a GeoJSON sequence must be one complete JSON value (RFC 8142)" : "Each line of newline-delimited GeoJSON must be one complete JSON object";
  const refuse = (error: JsonStreamError): never => {
    throw new DatasetInputError({ file: file.name, feature: error.unit === undefined ? undefined : index, offset: error.offset, reason: `line ${error.line}: ${error.reason}`, hint: error.reason.startsWith("invalid JSON") ? hint : error.hint });
  };

  try {
    for await (const chunk of createReadStream(file.path, { highWaterMark: CHUNK_BYTES })) {
      const bytes = chunk as Buffer;
      // RFC 8142's separator only ever stands between texts; as whitespace it leaves a sequence of values.
      for (let at = bytes.indexOf(RECORD_SEPARATOR); at >= 0; at = bytes.indexOf(RECORD_SEPARATOR, at + 1)) bytes[at] = 0x20;
      yield* take(stream.push(bytes));
      stream.check();
    }
  } catch (error) {
    if (error instanceof JsonStreamError) refuse(error);
    throw error;
  }
  try {
    yield* take(stream.end());
    stream.check();
  } catch (error) {
    if (!(error instanceof JsonStreamError)) throw error;
    if (sequence && error.reason.startsWith("the file ends unexpectedly")) {
      sink.warn({ message: `line ${error.line}: the last text is truncated (cut short) and was skipped (RFC 8142 §2.4)`, action: "note" });
    } else {
      refuse(error);
    }
  }
  gate.finish();
}

/** Picks the CRS of a GeoJSON input: the caller's option, else the legacy member, else RFC 7946's. */
export function geojsonCrs(file: string, member: unknown, options: ReadOptions): { summary: CrsSummary; resolved: ResolvedCrs } {
  const memberName = member === undefined || member === null ? undefined : crsMemberName(member);
  if (options.crs) {
    const resolved = resolveCrs(options.crs);
    if (!resolved) {
      throw new DatasetInputError({ file, reason: `the CRS ${JSON.stringify(options.crs)} given for this dataset is not known`, hint: "Give an EPSG code such as EPSG:4326 or EPSG:27700" });
    }
    const fromFile = memberName ? resolveCrs(memberName) : null;
    const standard = fromFile?.code === resolved.code || (!memberName && resolved.code === "EPSG:4326");
    return {
      summary: { code: resolved.code, source: standard && !memberName ? "rfc7946" : standard ? "crs-member" : "option", name: resolved.name, geographic: resolved.geographic, ...(memberName ? { nonStandard: true } : {}) },
      resolved,
    };
  }
  if (member !== undefined && member !== null) {
    if (!memberName) {
      throw new DatasetInputError({
        file,
        reason: `the "crs" member (${describeCrsMember(member)}) is not a named CRS`,
        hint: "RFC 7946 removed the crs member; reproject to WGS 84 longitude/latitude, or give the CRS as an EPSG code (the crs option)",
      });
    }
    const resolved = resolveCrs(memberName);
    if (!resolved) {
      throw new DatasetInputError({
        file,
        reason: `the "crs" member names ${JSON.stringify(memberName)}, a CRS Lissom does not know`,
        hint: "Give the CRS as an EPSG code (the crs option), or reproject to WGS 84 longitude/latitude as RFC 7946 requires",
      });
    }
    return { summary: { code: resolved.code, source: "crs-member", nonStandard: true, name: resolved.name, geographic: resolved.geographic }, resolved };
  }
  const resolved = resolveCrs("EPSG:4326")!;
  return { summary: { code: "EPSG:4326", source: "rfc7946", name: "WGS 84 (longitude, latitude)", geographic: true }, resolved };
}

/** GeoJSON 2008 §3.1: `{"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::27700"}}`. */
function crsMemberName(member: unknown): string | undefined {
  if (!member || typeof member !== "object") return undefined;
  const m = member as { type?: unknown; properties?: { name?: unknown; code?: unknown } };
  if (m.type === "name" && typeof m.properties?.name === "string") return m.properties.name;
  if (m.type === "EPSG" && (typeof m.properties?.code === "number" || typeof m.properties?.code === "string")) return `EPSG:${m.properties.code}`;
  return undefined;
}

function describeCrsMember(member: unknown): string {
  const name = crsMemberName(member);
  if (name) return name;
  const s = JSON.stringify(member) ?? "";
  return s.length > 60 ? s.slice(0, 60) + "…" : s;
}

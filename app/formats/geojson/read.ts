import { createReadStream } from "node:fs";
import { resolveCrs, type ResolvedCrs } from "../crs";
import { DatasetInputError } from "../errors";
import { FeatureGate, type ReaderSink } from "../gate";
import { MAX_FEATURE_BYTES } from "../limits";
import type { CrsSummary, FeatureItem, InputFile, ReadOptions } from "../types";
import { describeValue } from "../validate";
import { parseJson } from "./json-error";
import { GeoJSONScanner, ScanError } from "./scanner";

/** Read size for GeoJSON files: large enough that the per-chunk overhead vanishes. */
const CHUNK_BYTES = 1 << 20;

const GEOMETRY_TYPES = new Set(["Point", "MultiPoint", "LineString", "MultiLineString", "Polygon", "MultiPolygon", "GeometryCollection"]);

/**
 * Reads one GeoJSON text (RFC 7946): a FeatureCollection (streamed feature by feature), a single
 * Feature, or a bare geometry (wrapped in a Feature with null properties). The legacy `crs`
 * member (GeoJSON 2008, removed by RFC 7946 §4) is honoured when it comes before `features`,
 * and reported as non-standard.
 */
export async function* readGeoJSON(file: InputFile, options: ReadOptions, sink: ReaderSink): AsyncGenerator<FeatureItem> {
  const scanner = new GeoJSONScanner(MAX_FEATURE_BYTES);
  const root: Record<string, unknown> = {};
  let gate: FeatureGate | null = null;
  let sawFeatures = false;
  let lastOffset = 0;

  const fail = (reason: string, hint: string, offset?: number, feature?: number): never => {
    throw new DatasetInputError({ file: file.name, reason, hint, offset, feature });
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
    gate = new FeatureGate(file.name, resolved, sink);
    return gate;
  };

  const parse = (text: string, offset: number, feature?: number): unknown => {
    const r = parseJson(text);
    if (r.ok) return r.value;
    const at = offset + Buffer.byteLength(text.slice(0, r.problem.index));
    return fail(`invalid JSON: ${r.problem.message}`, "Fix the JSON syntax at this position (NaN, Infinity and unquoted text are not allowed in JSON)", at, feature);
  };

  try {
    for await (const chunk of createReadStream(file.path, { highWaterMark: CHUNK_BYTES })) {
      const events = scanner.push(chunk as Buffer);
      for (const ev of events) {
        lastOffset = ev.offset;
        if (ev.kind === "member") {
          root[ev.key] = parse(ev.text, ev.offset);
          if (ev.key === "type" && typeof root.type === "string" && root.type !== "FeatureCollection" && sawFeatures) {
            fail(`the root has a "features" array but "type" is ${JSON.stringify(root.type)}`, 'A file with a "features" array must be a FeatureCollection (RFC 7946 §3.3)');
          }
        } else if (ev.kind === "features-open") {
          sawFeatures = true;
          if (root.type !== undefined && root.type !== "FeatureCollection") {
            fail(`the root has a "features" array but "type" is ${JSON.stringify(root.type)}`, 'A file with a "features" array must be a FeatureCollection (RFC 7946 §3.3)', ev.offset);
          }
          openGate();
        } else if (ev.kind === "feature") {
          const raw = parse(ev.text, ev.offset, ev.index);
          let item: FeatureItem | null;
          try {
            item = openGate().accept(raw, ev.index);
          } catch (error) {
            if (error instanceof DatasetInputError && error.offset === undefined) {
              throw new DatasetInputError({ file: error.file, feature: error.feature, offset: ev.offset, reason: error.reason, hint: error.hint });
            }
            throw error;
          }
          if (item) yield item;
        }
      }
    }
    scanner.end();
  } catch (error) {
    if (error instanceof ScanError) fail(error.reason, error.hint, error.offset, error.feature);
    throw error;
  }

  if (sawFeatures) {
    if (root.type === undefined) fail('the root object has "features" but no "type" member', 'Add "type": "FeatureCollection" (RFC 7946 §3.3)');
    openGate().finish();
    return;
  }
  // A single Feature or a bare geometry.
  const type = root.type;
  if (type === "FeatureCollection") fail('the FeatureCollection has no "features" array', 'Add a "features" array of Feature objects (RFC 7946 §3.3)', lastOffset);
  if (typeof type !== "string") {
    fail(
      type === undefined ? 'the JSON object has no "type" member, so it is not GeoJSON' : `"type" is ${describeValue(type)}`,
      "GeoJSON needs a root object with \"type\" FeatureCollection, Feature or a geometry type (RFC 7946 §3)",
    );
  }
  let raw: unknown;
  if (type === "Feature") raw = root;
  else if (GEOMETRY_TYPES.has(type as string)) raw = { type: "Feature", properties: null, geometry: root };
  else fail(`"type" is ${JSON.stringify(type)}, which is not a GeoJSON type`, "GeoJSON's root must be a FeatureCollection, a Feature or a geometry (RFC 7946 §3)");
  const item = openGate().accept(raw, 0);
  if (item) yield item;
  openGate().finish();
}

/**
 * Newline-delimited GeoJSON (one Feature per line) and GeoJSON text sequences (RFC 8142: each
 * text starts with the record separator 0x1E and ends with a line feed). A line may hold a
 * Feature, a bare geometry (wrapped), or a FeatureCollection (its features taken in order).
 * Blank lines are ignored. RFC 8142 §2.4: a last text without its closing line feed may be
 * truncated; if it does not parse it is skipped with a warning rather than refused.
 */
export async function* readJsonLines(file: InputFile, options: ReadOptions, sink: ReaderSink, sequence: boolean): AsyncGenerator<FeatureItem> {
  const { summary, resolved } = geojsonCrs(file.name, undefined, options);
  sink.crs(summary, resolved);
  const gate = new FeatureGate(file.name, resolved, sink, (i) => `line ${lineOf.get(i) ?? "?"}`);
  // Feature index -> line number, for messages; only the current feature's entry is kept.
  const lineOf = new Map<number, number>();
  let index = 0;
  let pending: Buffer[] = [];
  let pendingBytes = 0;
  let lineStart = 0; // byte offset of the current line
  let lineNo = 1;
  let base = 0;

  function* handle(buf: Buffer, offset: number, line: number, complete: boolean): Generator<FeatureItem> {
    let start = 0;
    while (start < buf.length && (buf[start] === 0x20 || buf[start] === 0x09 || buf[start] === 0x0d || buf[start] === 0x1e)) start++;
    if (start === buf.length) return;
    const text = buf.subarray(start).toString("utf8");
    const r = parseJson(text);
    if (!r.ok) {
      if (!complete && sequence) {
        sink.warn({ message: `line ${line}: the last text has no closing line feed and does not parse; it looks truncated and was skipped (RFC 8142 §2.4)`, action: "note" });
        return;
      }
      throw new DatasetInputError({
        file: file.name,
        feature: index,
        offset: offset + start + Buffer.byteLength(text.slice(0, r.problem.index)),
        reason: `line ${line}: invalid JSON: ${r.problem.message}`,
        hint: sequence ? "Each text of a GeoJSON sequence must be one complete JSON value (RFC 8142)" : "Each line of newline-delimited GeoJSON must be one complete JSON object",
      });
    }
    const value = r.value as Record<string, unknown> | null;
    const parts: unknown[] =
      value && typeof value === "object" && value.type === "FeatureCollection" && Array.isArray(value.features)
        ? (value.features as unknown[])
        : value && typeof value === "object" && typeof value.type === "string" && GEOMETRY_TYPES.has(value.type)
          ? [{ type: "Feature", properties: null, geometry: value }]
          : [value];
    for (const raw of parts) {
      lineOf.clear();
      lineOf.set(index, line);
      let item: FeatureItem | null;
      try {
        item = gate.accept(raw, index);
      } catch (error) {
        if (error instanceof DatasetInputError && error.offset === undefined) {
          throw new DatasetInputError({ file: error.file, feature: error.feature, offset: offset + start, reason: error.reason, hint: error.hint });
        }
        throw error;
      }
      index++;
      if (item) yield item;
    }
  }

  const SEP = sequence ? 0x1e : 0x0a;
  for await (const c of createReadStream(file.path, { highWaterMark: CHUNK_BYTES })) {
    const chunk = c as Buffer;
    let from = 0;
    for (;;) {
      const at = chunk.indexOf(SEP, from);
      if (at < 0) break;
      const piece = chunk.subarray(from, at);
      const line = pending.length ? Buffer.concat([...pending, piece]) : piece;
      pending = [];
      pendingBytes = 0;
      if (sequence) {
        // The separator starts the next text; the text before it ends with its line feed.
        yield* handle(line, lineStart, lineNo, line.length === 0 || line[line.length - 1] === 0x0a);
      } else {
        yield* handle(line, lineStart, lineNo, true);
      }
      lineNo++;
      lineStart = base + at + 1;
      from = at + 1;
    }
    if (from < chunk.length) {
      const rest = chunk.subarray(from);
      pending.push(rest);
      pendingBytes += rest.length;
      if (pendingBytes > MAX_FEATURE_BYTES) {
        throw new DatasetInputError({
          file: file.name,
          feature: index,
          offset: lineStart,
          reason: `line ${lineNo} is longer than ${Math.round(MAX_FEATURE_BYTES / 1e6)} MB`,
          hint: sequence ? "Split very large geometries into several features" : "Check that the file really is newline-delimited (one Feature per line); otherwise name it .geojson",
        });
      }
    }
    base += chunk.length;
  }
  if (pending.length) {
    const line = Buffer.concat(pending);
    yield* handle(line, lineStart, lineNo, !sequence || line[line.length - 1] === 0x0a);
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

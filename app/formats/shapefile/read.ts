import { createReadStream } from "node:fs";
import { open as openFile, stat } from "node:fs/promises";
import * as shapefile from "shapefile";
import { resolveCrs, type ResolvedCrs } from "../crs";
import type { ShapefileParts } from "../detect";
import { DatasetInputError } from "../errors";
import { FeatureGate, type ReaderSink } from "../gate";
import type { CrsSummary, FeatureItem, ReadOptions } from "../types";
import { DEFAULT_DBF_ENCODING, encodingFromCpg, encodingFromLdid } from "./encoding";
import { AREA_SHAPES, LINE_SHAPES, parseShapeRecord, POINT_SHAPES, RecordError, SHAPE_TYPES, type ParsedShape } from "./records";

interface ShpHeader {
  shapeType: number;
  declaredBytes: number;
  actualBytes: number;
  bbox: [number, number, number, number];
}

interface DbfField {
  name: string;
  type: string;
  length: number;
  decimals: number;
}

interface DbfHeader {
  records: number;
  headerBytes: number;
  recordBytes: number;
  ldid: number;
  fields: DbfField[];
}

async function readHead(path: string, bytes: number): Promise<Buffer> {
  const fh = await openFile(path, "r");
  try {
    const buf = Buffer.alloc(bytes);
    const { bytesRead } = await fh.read(buf, 0, bytes, 0);
    return buf.subarray(0, bytesRead);
  } finally {
    await fh.close();
  }
}

/**
 * The main file header (Technical Description, "The Main File Header"): file code 9994 (big
 * endian) at byte 0, file length in 16-bit words (big endian) at 24, version 1000 (little
 * endian) at 28, shape type at 32, bounding box at 36. The .shx header has the same layout.
 */
async function readShpHeader(name: string, path: string, what: ".shp" | ".shx"): Promise<ShpHeader> {
  const head = await readHead(path, 100);
  const { size } = await stat(path);
  if (head.length < 100) {
    throw new DatasetInputError({ file: name, offset: head.length, reason: `the ${what} file is ${size} bytes, shorter than its 100-byte header`, hint: "The file is truncated; export or upload the Shapefile again" });
  }
  const code = head.readInt32BE(0);
  if (code !== 9994) {
    throw new DatasetInputError({ file: name, offset: 0, reason: `wrong file code ${code} (a ${what} file starts with 9994)`, hint: `This is not a Shapefile ${what} file, or it is damaged; export the Shapefile again` });
  }
  const version = head.readInt32LE(28);
  if (version !== 1000) {
    throw new DatasetInputError({ file: name, offset: 28, reason: `unknown Shapefile version ${version} (expected 1000)`, hint: "Export the Shapefile again with a current tool" });
  }
  const declaredBytes = head.readInt32BE(24) * 2;
  return {
    shapeType: head.readInt32LE(32),
    declaredBytes,
    actualBytes: size,
    bbox: [head.readDoubleLE(36), head.readDoubleLE(44), head.readDoubleLE(52), head.readDoubleLE(60)],
  };
}

/** dBase III+ header: record count at 4, header length at 8, record length at 10, language driver at 29, 32-byte field descriptors from 32 up to 0x0D. */
async function readDbfHeader(name: string, path: string): Promise<DbfHeader> {
  const { size } = await stat(path);
  const first = await readHead(path, 32);
  if (first.length < 32) throw new DatasetInputError({ file: name, offset: first.length, reason: `the .dbf file is ${size} bytes, shorter than its 32-byte header`, hint: "The file is truncated; export or upload the Shapefile again" });
  const records = first.readUInt32LE(4);
  const headerBytes = first.readUInt16LE(8);
  const recordBytes = first.readUInt16LE(10);
  if (headerBytes < 33 || headerBytes > size) {
    throw new DatasetInputError({ file: name, offset: 8, reason: `the .dbf header length ${headerBytes} does not fit the ${size}-byte file`, hint: "The .dbf is damaged; export the Shapefile again" });
  }
  const head = await readHead(path, headerBytes);
  const fields: DbfField[] = [];
  let width = 1; // the deletion flag
  for (let o = 32; o + 32 <= head.length && head[o] !== 0x0d; o += 32) {
    const raw = head.subarray(o, o + 11);
    const end = raw.indexOf(0);
    const field = {
      name: raw.subarray(0, end < 0 ? 11 : end).toString("latin1"),
      type: String.fromCharCode(head[o + 11]!),
      length: head[o + 16]!,
      decimals: head[o + 17]!,
    };
    fields.push(field);
    width += field.length;
  }
  if (width !== recordBytes) {
    throw new DatasetInputError({ file: name, offset: 10, reason: `the .dbf record length ${recordBytes} does not match its fields (${width} bytes)`, hint: "The .dbf is damaged; export the Shapefile again" });
  }
  const needed = headerBytes + records * recordBytes;
  if (size < needed) {
    const complete = Math.floor((size - headerBytes) / Math.max(recordBytes, 1));
    throw new DatasetInputError({
      file: name,
      offset: size,
      reason: `the .dbf file is truncated: its header announces ${records} records (${needed} bytes) but it holds ${size} bytes (${complete} complete records)`,
      hint: "Upload the complete .dbf file",
    });
  }
  return { records, headerBytes, recordBytes, ldid: first[29]!, fields };
}

function fieldType(f: DbfField): string {
  switch (f.type) {
    case "C":
      return "string";
    case "N":
    case "F":
      return f.decimals === 0 ? "integer" : "number";
    case "L":
      return "boolean";
    case "D":
      return "date";
    default:
      return "number";
  }
}

/**
 * Reads a Shapefile through the `shapefile` package (record framing and .dbf parsing), with two
 * of its internals replaced for version 0.6.6: the record parser (to keep Z and M, which the
 * package drops) and the .dbf text decoder (to decode strictly in the dataset's encoding).
 */
export async function* readShapefile(parts: ShapefileParts, options: ReadOptions, sink: ReaderSink): AsyncGenerator<FeatureItem> {
  const shpName = parts.shp.name;
  if (!parts.shx) {
    throw new DatasetInputError({ file: shpName, reason: "the .shx index file is missing", hint: "Upload the .shx file with the .shp and .dbf (all parts of one Shapefile, or a .zip of them)" });
  }
  if (!parts.dbf) {
    throw new DatasetInputError({ file: shpName, reason: "the .dbf attribute file is missing", hint: "Upload the .dbf file with the .shp and .shx (all parts of one Shapefile, or a .zip of them)" });
  }
  const header = await readShpHeader(shpName, parts.shp.path, ".shp");
  const shxHeader = await readShpHeader(parts.shx.name, parts.shx.path, ".shx");
  const typeName = SHAPE_TYPES[header.shapeType] ?? `unknown (${header.shapeType})`;
  if (POINT_SHAPES.has(header.shapeType)) {
    throw new DatasetInputError({ file: shpName, offset: 32, reason: `the shape type is ${typeName}: Lissom works on lines and area boundaries, not points`, hint: "Upload a PolyLine or Polygon Shapefile" });
  }
  if (header.shapeType === 31) {
    throw new DatasetInputError({ file: shpName, offset: 32, reason: "the shape type is MultiPatch (3D surfaces), which Lissom does not read", hint: "Export the surfaces' outlines as a PolygonZ or PolyLineZ Shapefile" });
  }
  if (!LINE_SHAPES.has(header.shapeType) && !AREA_SHAPES.has(header.shapeType)) {
    throw new DatasetInputError({ file: shpName, offset: 32, reason: `the shape type ${typeName} is not a line or polygon type`, hint: "Upload a PolyLine or Polygon Shapefile (with or without Z/M)" });
  }
  if (header.actualBytes < header.declaredBytes) {
    throw new DatasetInputError({
      file: shpName,
      offset: header.actualBytes,
      reason: `the .shp file is truncated: its header announces ${header.declaredBytes} bytes but it holds ${header.actualBytes}`,
      hint: "Upload the complete .shp file",
    });
  }
  if (shxHeader.actualBytes < shxHeader.declaredBytes || (shxHeader.actualBytes - 100) % 8 !== 0) {
    throw new DatasetInputError({ file: parts.shx.name, offset: shxHeader.actualBytes, reason: `the .shx file is truncated or damaged (${shxHeader.actualBytes} bytes; header says ${shxHeader.declaredBytes})`, hint: "Upload the complete .shx file" });
  }
  const shpRecords = (shxHeader.declaredBytes - 100) / 8;
  const dbf = await readDbfHeader(parts.dbf.name, parts.dbf.path);
  if (dbf.records !== shpRecords) {
    throw new DatasetInputError({
      file: shpName,
      reason: `record count mismatch: the .shp has ${shpRecords} records (per its .shx) but ${parts.dbf.name} has ${dbf.records}`,
      hint: "The parts come from different exports; upload the .shp, .shx and .dbf written together",
    });
  }

  // CRS
  const { summary: crs, resolved } = await shapefileCrs(parts, header, options, sink);
  sink.crs(crs, resolved);

  // Encoding
  let encoding: string;
  let encodingSource: string;
  if (parts.cpg) {
    const text = (await readHead(parts.cpg.path, 256)).toString("latin1");
    const e = encodingFromCpg(text);
    if (!e) {
      throw new DatasetInputError({ file: parts.cpg.name, reason: `the .cpg names an encoding Lissom does not know (${JSON.stringify(text.trim().slice(0, 40))})`, hint: "Write the encoding in the .cpg as e.g. UTF-8 or 1252, or remove the .cpg to read the attributes as UTF-8" });
    }
    encoding = e;
    encodingSource = ".cpg";
  } else {
    const fromLdid = encodingFromLdid(dbf.ldid);
    encoding = fromLdid ?? DEFAULT_DBF_ENCODING;
    encodingSource = fromLdid ? `.dbf language driver 0x${dbf.ldid.toString(16)}` : "default (no .cpg)";
  }
  sink.extra?.({ encoding });
  if (!parts.cpg) sink.warn({ message: `no .cpg file: attributes read as ${encoding} (${encodingSource})`, action: "note" });
  const attributeTypes: Record<string, string> = {};
  for (const f of dbf.fields) attributeTypes[f.name] = fieldType(f);
  sink.attributes?.(attributeTypes);

  const source = await shapefile.open(createReadStream(parts.shp.path), createReadStream(parts.dbf.path), { encoding: "utf-8" });
  const internals = source as unknown as {
    _shp: { _parse: (view: DataView) => unknown; _type: number };
    _dbf: { _decode: (bytes: Uint8Array) => string; _fields: { name: string }[] };
  };
  if (!internals._shp || typeof internals._shp._parse !== "function" || !internals._dbf || typeof internals._dbf._decode !== "function") {
    throw new Error("the shapefile package's internals changed; readShapefile needs version 0.6.6");
  }
  let recordError: { message: string } | null = null;
  let lastShape: ParsedShape | null = null;
  internals._shp._parse = (view: DataView) => {
    try {
      lastShape = parseShapeRecord(view, header.shapeType);
    } catch (e) {
      if (!(e instanceof RecordError)) throw e;
      recordError = { message: e.message };
      lastShape = null;
    }
    return lastShape ? lastShape.geometry : null;
  };
  const fatal = new TextDecoder(encoding, { fatal: true });
  const lenient = new TextDecoder(encoding);
  let fieldPos = 0;
  let badField: number | null = null;
  internals._dbf._decode = (bytes: Uint8Array) => {
    const k = fieldPos++;
    try {
      return fatal.decode(bytes);
    } catch {
      badField ??= k;
      return lenient.decode(bytes);
    }
  };
  const fieldNames = internals._dbf._fields.map((f) => f.name);

  const gate = new FeatureGate(shpName, resolved, sink, (i) => `record ${i + 1}`);
  let index = 0;
  let hasM = false;
  try {
    for (;;) {
      fieldPos = 0;
      badField = null;
      recordError = null;
      lastShape = null;
      const r = await source.read();
      if (r.done) break;
      if (badField !== null) {
        throw new DatasetInputError({
          file: parts.dbf.name,
          feature: index,
          reason: `record ${index + 1}, field ${fieldNames[badField] ?? badField}: the text is not valid ${encoding} (encoding from ${encodingSource})`,
          hint: parts.cpg ? "The .cpg names the wrong encoding; correct it (e.g. 1252 for Western European Windows text)" : "Add a .cpg file naming the attributes' encoding (e.g. a file holding 1252 or ISO-8859-1), or re-export the attributes as UTF-8",
        });
      }
      if (recordError) {
        throw new DatasetInputError({ file: shpName, feature: index, reason: `record ${index + 1}: ${(recordError as { message: string }).message}`, hint: "The .shp is damaged; export the Shapefile again" });
      }
      const props: Record<string, unknown> = {};
      const raw = (r.value.properties ?? {}) as Record<string, unknown>;
      for (const key in raw) {
        const v = raw[key];
        props[key] = v instanceof Date ? (Number.isNaN(v.getTime()) ? null : isoDate(v)) : v;
      }
      const shape = lastShape as ParsedShape | null;
      const feature: Record<string, unknown> = { type: "Feature", properties: props, geometry: shape ? shape.geometry : null };
      if (shape?.measures) {
        feature.measures = shape.measures;
        hasM = true;
      }
      const item = gate.accept(feature, index);
      index++;
      if (item) yield item;
    }
  } finally {
    await source.cancel().catch(() => {});
  }
  if (index !== shpRecords) {
    throw new DatasetInputError({
      file: shpName,
      reason: `the .shp gave ${index} readable records but its .shx lists ${shpRecords}`,
      hint: "The .shp is damaged or does not belong to this .shx; export the Shapefile again",
    });
  }
  if (hasM) {
    sink.extra?.({ encoding, hasM: true });
    sink.warn({ message: 'M (measure) values are carried in each feature\'s "measures" member, per part and vertex (positions hold x, y and Z only)', action: "note" });
  }
  gate.finish();
}

function isoDate(d: Date): string {
  const p = (n: number, w = 2) => String(n).padStart(w, "0");
  return `${p(d.getFullYear(), 4)}-${p(d.getMonth() + 1)}-${p(d.getDate())}`;
}

async function shapefileCrs(parts: ShapefileParts, header: ShpHeader, options: ReadOptions, sink: ReaderSink): Promise<{ summary: CrsSummary; resolved: ResolvedCrs }> {
  let fromPrj: ResolvedCrs | null = null;
  let wkt: string | undefined;
  if (parts.prj) {
    const bytes = await readHead(parts.prj.path, 64 * 1024);
    wkt = bytes.toString("utf8").replace(/^\uFEFF/, "").trim();
    fromPrj = wkt ? resolveCrs(wkt) : null;
    if (!fromPrj && !options.crs) {
      throw new DatasetInputError({
        file: parts.prj.name,
        reason: wkt ? `the .prj could not be read as a CRS (${JSON.stringify(wkt.slice(0, 50))}${wkt.length > 50 ? "…" : ""})` : "the .prj file is empty",
        hint: "Export the Shapefile again with its .prj (WKT), or state the CRS as an EPSG code (the crs option)",
      });
    }
  }
  if (options.crs) {
    const resolved = resolveCrs(options.crs);
    if (!resolved) throw new DatasetInputError({ file: parts.shp.name, reason: `the CRS ${JSON.stringify(options.crs)} given for this dataset is not known`, hint: "Give an EPSG code such as EPSG:27700" });
    if (fromPrj && fromPrj.code === resolved.code) {
      return { summary: { code: fromPrj.code, source: "prj", name: fromPrj.name, geographic: fromPrj.geographic, wkt }, resolved: fromPrj };
    }
    if (fromPrj) sink.warn({ message: `the .prj says ${fromPrj.name}; the CRS given for the dataset (${resolved.code}) is used instead`, action: "note" });
    return { summary: { code: resolved.code, source: "option", name: resolved.name, geographic: resolved.geographic }, resolved };
  }
  if (fromPrj) return { summary: { code: fromPrj.code, source: "prj", name: fromPrj.name, geographic: fromPrj.geographic, wkt }, resolved: fromPrj };
  // No .prj: longitude/latitude bounds suggest WGS 84; anything else cannot be placed.
  const [x0, y0, x1, y1] = header.bbox;
  if (x0 >= -180 && x1 <= 180 && y0 >= -90 && y1 <= 90) {
    sink.warn({ message: "no .prj file: the coordinates lie within longitude/latitude range, so WGS 84 (EPSG:4326) was assumed; state the CRS if that is wrong", action: "note" });
    const resolved = resolveCrs("EPSG:4326")!;
    return { summary: { code: "EPSG:4326", source: "assumed", name: resolved.name, geographic: true }, resolved };
  }
  throw new DatasetInputError({
    file: parts.shp.name,
    reason: "there is no .prj file, so the CRS of these projected coordinates is unknown",
    hint: "Add the .prj file to the upload, or state the CRS as an EPSG code (the crs option)",
  });
}

import { createReadStream, createWriteStream } from "node:fs";
import { mkdtemp, rm, stat, writeFile } from "node:fs/promises";
import { basename, dirname, join } from "node:path";
import { createInterface } from "node:readline";
import { DBFFile } from "dbffile";
import yazl from "yazl";
import { normaliseCrsCode, wktFor } from "../crs";
import type { GeoJSONFeature, LinearGeometry, Position } from "../types";
import { asFeature, familyOf, vertexCount } from "../write/features";
import { FileSink } from "../write/file-sink";
import { metadataDocument, type OutputMeta, type WriteResult } from "../write/meta";
import { M_NO_DATA, signedArea } from "./records";

/**
 * Zipped Shapefile output: .shp, .shx, .dbf (UTF-8, declared in a .cpg), .prj and a sidecar
 * `<name>.metadata.json`, written in one pass over the features with bounded memory.
 *
 * The attribute table is written by `dbffile`. The geometry files are written here, following
 * the ESRI Shapefile Technical Description (July 1998): the widely used npm Shapefile writer
 * builds the whole dataset in memory with time growing about quadratically (`npm run bench`
 * measures it beside this writer) and writes neither Z nor M. Everything is checked by reading
 * it back with the independent `shapefile` package (tests/unit/formats/shapefile.test.ts). The
 * archive is made with `yazl`.
 *
 * Geometry: lines become PolyLine, areas Polygon (outer rings clockwise, holes
 * counter-clockwise, as the Technical Description requires); a dataset with both gets two
 * Shapefiles in the archive, `<name>_lines` and `<name>_areas`. Z when the first feature has Z;
 * M when the first feature carries `measures` that match its vertices. Attributes: booleans as
 * L, integers and reals as N, text and anything else (JSON for objects) as C; names cut to ten
 * characters and made unique (the mapping is in the metadata); text longer than 254 bytes is
 * cut (counted in the notes).
 */
export async function writeShapefileZip(features: AsyncIterable<object>, zipPath: string, meta: OutputMeta, finalName: string): Promise<Omit<WriteResult, "files" | "format" | "mediaType">> {
  const stem = basename(finalName).replace(/\.zip$/i, "") || "output";
  const work = await mkdtemp(join(dirname(zipPath), ".lissom-shp-"));
  const layers = new Map<"line" | "area", ShapefileLayer>();
  try {
    const notes: string[] = [];
    let count = 0;
    let vertices = 0;
    try {
      for await (const value of features) {
        const f = asFeature(value, count);
        const family = familyOf(f.geometry);
        let layer = layers.get(family);
        if (!layer) {
          layer = await ShapefileLayer.open(join(work, family), family);
          layers.set(family, layer);
        }
        await layer.add(f);
        count++;
        vertices += vertexCount(f.geometry);
      }
      if (count === 0) throw new Error("Shapefile output needs at least one feature");
      for (const layer of layers.values()) await layer.finish(notes);
    } catch (error) {
      for (const layer of layers.values()) await layer.abandon();
      throw error;
    }
    // One geometry family: <stem>.shp etc.; both: <stem>_lines.* and <stem>_areas.* (a Shapefile holds one shape type).
    const crs = normaliseCrsCode(meta.crs ?? "EPSG:4326");
    const wkt = meta.crsWkt ?? wktFor(crs);
    if (!wkt) notes.push(`no .prj written: no WKT is known for ${crs}`);
    if (layers.size > 1) notes.push("lines and polygons are in separate Shapefiles (_lines and _areas): a Shapefile holds one shape type");
    await writeFile(join(work, "cpg"), "UTF-8");
    if (wkt) await writeFile(join(work, "prj"), wkt);
    const entries: { path: string; name: string }[] = [];
    const fieldMaps: Record<string, Record<string, string>> = {};
    for (const [family, layer] of layers) {
      const name = layers.size > 1 ? `${stem}_${family === "line" ? "lines" : "areas"}` : stem;
      for (const ext of ["shp", "shx", "dbf"]) entries.push({ path: join(work, `${family}.${ext}`), name: `${name}.${ext}` });
      entries.push({ path: join(work, "cpg"), name: `${name}.cpg` });
      if (wkt) entries.push({ path: join(work, "prj"), name: `${name}.prj` });
      const map = layer.fieldMap();
      if (Object.keys(map).length) fieldMaps[`${name}.dbf`] = map;
    }
    const doc = metadataDocument(meta, "shapefile", notes);
    await writeFile(join(work, "metadata.json"), JSON.stringify({ ...doc, ...(Object.keys(fieldMaps).length ? { dbfFieldNames: fieldMaps } : {}) }, null, 2) + "\n");
    entries.push({ path: join(work, "metadata.json"), name: `${stem}.metadata.json` });
    await zipFiles(entries, zipPath);
    const { size } = await stat(zipPath);
    return { features: count, vertices, segments: 0, bytes: size, notes };
  } finally {
    await rm(work, { recursive: true, force: true });
  }
}

type Box = { xmin: number; ymin: number; xmax: number; ymax: number; zmin: number; zmax: number; mmin: number; mmax: number };

/** One .shp/.shx/.dbf triple of one geometry family, written as features arrive. */
class ShapefileLayer {
  private schema = new SchemaBuilder();
  private shapeType = 0;
  private withZ = false;
  private withM = false;
  private count = 0;
  private offsetWords = 50;
  private mismatchedMeasures = 0;
  private fields: DbfFieldDef[] = [];
  private box: Box = { xmin: Infinity, ymin: Infinity, xmax: -Infinity, ymax: -Infinity, zmin: Infinity, zmax: -Infinity, mmin: Infinity, mmax: -Infinity };

  private constructor(
    private base: string,
    private family: "line" | "area",
    private shp: FileSink,
    private shx: FileSink,
    private attrs: FileSink,
  ) {}

  static async open(base: string, family: "line" | "area"): Promise<ShapefileLayer> {
    const layer = new ShapefileLayer(base, family, await FileSink.create(`${base}.shp`), await FileSink.create(`${base}.shx`), await FileSink.create(`${base}.attributes.ndjson`));
    await layer.shp.write(new Uint8Array(100));
    await layer.shx.write(new Uint8Array(100));
    return layer;
  }

  async add(f: GeoJSONFeature): Promise<void> {
    if (this.count === 0) {
      this.withZ = partsOfRecord(f.geometry).some((p) => p.some((q) => q.length > 2));
      this.withM = measuresMatch(f.geometry, f.measures);
      this.shapeType = (this.family === "line" ? 3 : 5) + (this.withZ ? 10 : this.withM ? 20 : 0);
    }
    const parts = partsOfRecord(f.geometry);
    const measures = this.withM && measuresMatch(f.geometry, f.measures) ? (f.measures as number[][]).map((m) => m.slice()) : null;
    if (this.withM && !measures) this.mismatchedMeasures++;
    if (this.family === "area") orientRings(f.geometry, parts, measures);
    const content = encodeRecord(this.shapeType, parts, this.withZ, this.withM, measures, this.box);
    const header = Buffer.alloc(8);
    header.writeInt32BE(this.count + 1, 0);
    header.writeInt32BE(content.length / 2, 4);
    await this.shp.write(header);
    await this.shp.write(content);
    const idx = Buffer.alloc(8);
    idx.writeInt32BE(this.offsetWords, 0);
    idx.writeInt32BE(content.length / 2, 4);
    await this.shx.write(idx);
    this.offsetWords += 4 + content.length / 2;
    const props = f.properties ?? {};
    this.schema.add(props);
    await this.attrs.write(JSON.stringify(props) + "\n");
    this.count++;
  }

  async finish(notes: string[]): Promise<void> {
    const head = Buffer.alloc(100);
    writeMainHeader(head, this.shapeType, this.offsetWords, this.box, this.withZ, this.withM);
    await this.shp.writeAt(head, 0);
    writeMainHeader(head, this.shapeType, 50 + this.count * 4, this.box, this.withZ, this.withM);
    await this.shx.writeAt(head, 0);
    await this.shp.close();
    await this.shx.close();
    await this.attrs.close();
    if (this.mismatchedMeasures) notes.push(`${this.mismatchedMeasures} features had no M values matching their vertices; their M is written as "no data"`);
    this.fields = this.schema.fields(notes);
    await writeDbf(`${this.base}.dbf`, `${this.base}.attributes.ndjson`, this.fields, notes);
    await rm(`${this.base}.attributes.ndjson`);
  }

  fieldMap(): Record<string, string> {
    return Object.fromEntries(this.fields.filter((f) => f.source !== "" && f.source !== f.name).map((f) => [f.source, f.name]));
  }

  async abandon(): Promise<void> {
    await Promise.all([this.shp.abandon(), this.shx.abandon(), this.attrs.abandon()]);
  }
}

async function zipFiles(entries: { path: string; name: string }[], zipPath: string): Promise<void> {
  const zip = new yazl.ZipFile();
  for (const e of entries) zip.addFile(e.path, e.name, { compress: true });
  zip.end();
  await new Promise<void>((resolve, reject) => {
    const out = createWriteStream(zipPath);
    zip.outputStream.on("error", reject).pipe(out).on("error", reject).on("close", resolve);
  });
}

function partsOfRecord(g: LinearGeometry): Position[][] {
  switch (g.type) {
    case "LineString":
      return [g.coordinates];
    case "MultiLineString":
    case "Polygon":
      return g.coordinates.map((p) => p);
    case "MultiPolygon":
      return g.coordinates.flat();
  }
}

function measuresMatch(g: LinearGeometry, measures: unknown): measures is number[][] {
  if (!Array.isArray(measures)) return false;
  const parts = partsOfRecord(g);
  return measures.length === parts.length && parts.every((p, i) => Array.isArray(measures[i]) && measures[i].length === p.length);
}

/** Outer rings clockwise, holes counter-clockwise (Technical Description, "Polygon"). */
function orientRings(g: LinearGeometry, parts: Position[][], measures: number[][] | null): void {
  const outer: boolean[] = [];
  if (g.type === "Polygon") g.coordinates.forEach((_, i) => outer.push(i === 0));
  else if (g.type === "MultiPolygon") for (const p of g.coordinates) p.forEach((_, i) => outer.push(i === 0));
  parts.forEach((ring, k) => {
    const area = signedArea(ring);
    const clockwise = area < 0;
    if (outer[k] !== clockwise) {
      parts[k] = ring.slice().reverse();
      if (measures) measures[k] = measures[k]!.slice().reverse();
    }
  });
}

function encodeRecord(
  shapeType: number,
  parts: Position[][],
  withZ: boolean,
  withM: boolean,
  measures: number[][] | null,
  box: Box,
): Buffer {
  let n = 0;
  for (const p of parts) n += p.length;
  const np = parts.length;
  const size = 44 + 4 * np + 16 * n + (withZ ? 16 + 8 * n : 0) + (withM ? 16 + 8 * n : 0);
  const b = Buffer.alloc(size);
  b.writeInt32LE(shapeType, 0);
  let xmin = Infinity,
    ymin = Infinity,
    xmax = -Infinity,
    ymax = -Infinity;
  let o = 44 + 4 * np;
  let start = 0;
  for (let k = 0; k < np; k++) {
    b.writeInt32LE(start, 44 + 4 * k);
    for (const q of parts[k]!) {
      const x = q[0]!;
      const y = q[1]!;
      b.writeDoubleLE(x, o);
      b.writeDoubleLE(y, o + 8);
      o += 16;
      if (x < xmin) xmin = x;
      if (x > xmax) xmax = x;
      if (y < ymin) ymin = y;
      if (y > ymax) ymax = y;
    }
    start += parts[k]!.length;
  }
  b.writeDoubleLE(xmin, 4);
  b.writeDoubleLE(ymin, 12);
  b.writeDoubleLE(xmax, 20);
  b.writeDoubleLE(ymax, 28);
  b.writeInt32LE(np, 36);
  b.writeInt32LE(n, 40);
  box.xmin = Math.min(box.xmin, xmin);
  box.ymin = Math.min(box.ymin, ymin);
  box.xmax = Math.max(box.xmax, xmax);
  box.ymax = Math.max(box.ymax, ymax);
  if (withZ) {
    let zmin = Infinity,
      zmax = -Infinity;
    const zs = o + 16;
    let j = 0;
    for (const p of parts)
      for (const q of p) {
        const z = q.length > 2 && Number.isFinite(q[2]) ? q[2]! : 0;
        b.writeDoubleLE(z, zs + 8 * j++);
        if (z < zmin) zmin = z;
        if (z > zmax) zmax = z;
      }
    b.writeDoubleLE(zmin, o);
    b.writeDoubleLE(zmax, o + 8);
    box.zmin = Math.min(box.zmin, zmin);
    box.zmax = Math.max(box.zmax, zmax);
    o = zs + 8 * n;
  }
  if (withM) {
    let mmin = Infinity,
      mmax = -Infinity;
    const ms = o + 16;
    let j = 0;
    for (let k = 0; k < np; k++)
      for (let i = 0; i < parts[k]!.length; i++) {
        const m = measures ? measures[k]![i]! : -Number.MAX_VALUE;
        b.writeDoubleLE(m, ms + 8 * j++);
        if (m > M_NO_DATA) {
          if (m < mmin) mmin = m;
          if (m > mmax) mmax = m;
        }
      }
    b.writeDoubleLE(Number.isFinite(mmin) ? mmin : -Number.MAX_VALUE, o);
    b.writeDoubleLE(Number.isFinite(mmax) ? mmax : -Number.MAX_VALUE, o + 8);
    if (Number.isFinite(mmin)) {
      box.mmin = Math.min(box.mmin, mmin);
      box.mmax = Math.max(box.mmax, mmax);
    }
  }
  return b;
}

function writeMainHeader(h: Buffer, shapeType: number, lengthWords: number, box: Box, withZ: boolean, withM: boolean): void {
  h.fill(0);
  h.writeInt32BE(9994, 0);
  h.writeInt32BE(lengthWords, 24);
  h.writeInt32LE(1000, 28);
  h.writeInt32LE(shapeType, 32);
  h.writeDoubleLE(box.xmin, 36);
  h.writeDoubleLE(box.ymin, 44);
  h.writeDoubleLE(box.xmax, 52);
  h.writeDoubleLE(box.ymax, 60);
  h.writeDoubleLE(withZ ? box.zmin : 0, 68);
  h.writeDoubleLE(withZ ? box.zmax : 0, 76);
  h.writeDoubleLE(withM && Number.isFinite(box.mmin) ? box.mmin : 0, 84);
  h.writeDoubleLE(withM && Number.isFinite(box.mmax) ? box.mmax : 0, 92);
}

interface FieldStats {
  source: string;
  kinds: Set<string>;
  maxBytes: number;
  intDigits: number;
  decimals: number;
}

export interface DbfFieldDef {
  source: string;
  name: string;
  type: "C" | "N" | "L";
  length: number;
  decimals: number;
}

/** dBase N fields are at most 20 characters wide (the limit `dbffile` enforces). */
const MAX_NUMBER_WIDTH = 20;
const MAX_TEXT_BYTES = 254;

class SchemaBuilder {
  private stats = new Map<string, FieldStats>();

  add(props: Record<string, unknown>): void {
    for (const key in props) {
      let s = this.stats.get(key);
      if (!s) {
        s = { source: key, kinds: new Set(), maxBytes: 0, intDigits: 1, decimals: 0 };
        this.stats.set(key, s);
      }
      const v = props[key];
      if (v === null || v === undefined) continue;
      if (typeof v === "boolean") s.kinds.add("boolean");
      else if (typeof v === "number" && Number.isFinite(v)) {
        s.kinds.add("number");
        const text = numberText(v);
        const [int, frac] = text.split(".");
        s.intDigits = Math.max(s.intDigits, int!.length);
        s.decimals = Math.max(s.decimals, frac?.length ?? 0);
      } else s.kinds.add("text");
      s.maxBytes = Math.max(s.maxBytes, Buffer.byteLength(textOf(v)));
    }
  }

  fields(notes: string[]): DbfFieldDef[] {
    const used = new Set<string>();
    const out: DbfFieldDef[] = [];
    for (const s of this.stats.values()) {
      const name = uniqueName(s.source, used);
      const kinds = s.kinds;
      if (kinds.size === 1 && kinds.has("boolean")) out.push({ source: s.source, name, type: "L", length: 1, decimals: 0 });
      else if (kinds.size === 1 && kinds.has("number") && s.intDigits <= MAX_NUMBER_WIDTH) {
        let decimals = Math.min(s.decimals, 15);
        if (s.intDigits + (decimals ? decimals + 1 : 0) > MAX_NUMBER_WIDTH) {
          decimals = Math.max(0, MAX_NUMBER_WIDTH - s.intDigits - 1);
          notes.push(`attribute ${s.source}: decimals cut to ${decimals} to fit a dBase number field`);
        }
        out.push({ source: s.source, name, type: "N", length: s.intDigits + (decimals ? decimals + 1 : 0), decimals });
      } else {
        if (s.maxBytes > MAX_TEXT_BYTES) notes.push(`attribute ${s.source}: text longer than ${MAX_TEXT_BYTES} bytes was cut (a dBase limit)`);
        out.push({ source: s.source, name, type: "C", length: Math.max(1, Math.min(MAX_TEXT_BYTES, s.maxBytes)), decimals: 0 });
      }
    }
    if (out.length === 0) out.push({ source: "", name: "feature", type: "N", length: 10, decimals: 0 });
    return out;
  }
}

function numberText(v: number): string {
  if (Number.isInteger(v) && Math.abs(v) < 1e21) return v.toFixed(0);
  const s = String(v);
  if (!/e/i.test(s)) return s;
  return v.toFixed(15).replace(/0+$/, "");
}

function textOf(v: unknown): string {
  if (typeof v === "string") return v;
  if (typeof v === "number" || typeof v === "boolean") return String(v);
  return JSON.stringify(v) ?? "";
}

/** dBase field names: at most 10 bytes, ASCII letters, digits and underscores, unique. */
function uniqueName(source: string, used: Set<string>): string {
  let base = source.replace(/[^A-Za-z0-9_]/g, "_").slice(0, 10) || "field";
  if (/^[0-9]/.test(base)) base = ("f" + base).slice(0, 10);
  let name = base;
  for (let i = 1; used.has(name.toUpperCase()); i++) {
    const suffix = `_${i}`;
    name = base.slice(0, 10 - suffix.length) + suffix;
  }
  used.add(name.toUpperCase());
  return name;
}

/** Records handed to the .dbf writer per call (each call opens the file once). */
const DBF_BATCH = 2000;

/**
 * Writes the attribute table with `dbffile` (dBase III, UTF-8 declared by the .cpg), reading
 * back the attributes spooled while the geometry was written: field widths are only known once
 * every feature has been seen. Values are shaped to their field first: text cut at a UTF-8
 * character boundary (the package cuts at a byte), numbers rounded to the field's decimals.
 */
async function writeDbf(path: string, attrPath: string, fields: DbfFieldDef[], notes: string[]): Promise<void> {
  try {
    const dbf = await DBFFile.create(
      path,
      fields.map((f) => ({ name: f.name, type: f.type, size: f.length, decimalPlaces: f.decimals })),
      { encoding: "utf-8" },
    );
    let cut = 0;
    let index = 0;
    let batch: Record<string, unknown>[] = [];
    const lines = createInterface({ input: createReadStream(attrPath), crlfDelay: Infinity });
    for await (const line of lines) {
      if (!line) continue;
      const props = JSON.parse(line) as Record<string, unknown>;
      const record: Record<string, unknown> = {};
      for (const f of fields) {
        const v = f.source === "" ? index : props[f.source];
        if (v === null || v === undefined) continue;
        if (f.type === "L") record[f.name] = v === true;
        else if (f.type === "N") record[f.name] = typeof v === "number" ? Number(v.toFixed(f.decimals)) : null;
        else {
          const bytes = Buffer.from(textOf(v), "utf8");
          const end = utf8Boundary(bytes, f.length);
          if (end < bytes.length) cut++;
          record[f.name] = bytes.subarray(0, end).toString("utf8");
        }
      }
      batch.push(record);
      index++;
      if (batch.length === DBF_BATCH) {
        await dbf.appendRecords(batch);
        batch = [];
      }
    }
    if (batch.length) await dbf.appendRecords(batch);
    if (cut) notes.push(`${cut} text values were cut to fit dBase fields`);
  } catch (error) {
    await rm(path, { force: true });
    throw error;
  }
}

/** The largest prefix length ≤ max that does not split a UTF-8 sequence. */
function utf8Boundary(bytes: Buffer, max: number): number {
  if (bytes.length <= max) return bytes.length;
  let end = max;
  while (end > 0 && (bytes[end]! & 0xc0) === 0x80) end--;
  return end;
}


import { open, stat } from "node:fs/promises";
import { extname } from "node:path";
import { DatasetInputError } from "./errors";
import { MAX_UPLOAD_BYTES } from "./limits";
import type { InputFile } from "./types";

/** What an upload holds, decided from the names and checked against the first bytes. */
export type DetectedInput =
  | { kind: "geojson" | "ndjson" | "geojsonseq"; file: InputFile }
  | { kind: "zip"; file: InputFile }
  | { kind: "shapefile"; parts: ShapefileParts };

export interface ShapefileParts {
  shp: InputFile;
  shx?: InputFile;
  dbf?: InputFile;
  prj?: InputFile;
  cpg?: InputFile;
  /** Files that come with Shapefiles and are not needed (indexes, metadata). */
  ignored: InputFile[];
}

/** File name extensions, lower case, with the reader they select. */
export const INPUT_EXTENSIONS: Record<string, "geojson" | "ndjson" | "geojsonseq" | "zip" | "shapefile-part"> = {
  ".geojson": "geojson",
  ".json": "geojson",
  ".ndjson": "ndjson",
  ".geojsonl": "ndjson",
  ".geojsonnl": "ndjson",
  ".jsonl": "ndjson",
  ".geojsons": "geojsonseq",
  ".geojsonseq": "geojsonseq",
  ".zip": "zip",
  ".shp": "shapefile-part",
  ".shx": "shapefile-part",
  ".dbf": "shapefile-part",
  ".prj": "shapefile-part",
  ".cpg": "shapefile-part",
};
/** Sidecar files that often travel with Shapefiles; accepted and not read. */
const SHAPEFILE_EXTRAS = new Set([".qix", ".sbn", ".sbx", ".xml", ".shp.xml", ".fix", ".atx", ".qmd", ".aih", ".ain"]);

/** The `accept` list for file pickers. */
export const ACCEPTED_EXTENSIONS = [...Object.keys(INPUT_EXTENSIONS)];

type Sniffed = "zip" | "shp" | "json" | "rs" | "dbf" | "text" | "binary" | "empty" | "gzip";

async function sniff(path: string): Promise<Sniffed> {
  const fh = await open(path, "r");
  try {
    const buf = Buffer.alloc(512);
    const { bytesRead } = await fh.read(buf, 0, 512, 0);
    const b = buf.subarray(0, bytesRead);
    if (bytesRead === 0) return "empty";
    if (bytesRead >= 4 && b[0] === 0x50 && b[1] === 0x4b && (b[2] === 3 || b[2] === 5 || b[2] === 7)) return "zip";
    if (bytesRead >= 2 && b[0] === 0x1f && b[1] === 0x8b) return "gzip";
    if (bytesRead >= 4 && b.readInt32BE(0) === 9994) return "shp";
    let i = 0;
    if (b[0] === 0xef && b[1] === 0xbb && b[2] === 0xbf) i = 3;
    while (i < bytesRead && (b[i] === 0x20 || b[i] === 0x0a || b[i] === 0x0d || b[i] === 0x09)) i++;
    if (b[i] === 0x1e) return "rs";
    if (b[i] === 0x7b || b[i] === 0x5b) return "json";
    // dBase III+ and later: version byte, then a plausible YY MM DD date.
    if ((b[0] === 0x03 || b[0] === 0x83 || b[0] === 0x8b || b[0] === 0x30 || b[0] === 0xf5) && bytesRead >= 32 && b[2]! >= 1 && b[2]! <= 12 && b[3]! >= 1 && b[3]! <= 31) return "dbf";
    const sample = b.subarray(0, Math.min(bytesRead, 256));
    const binary = sample.some((c) => c === 0 || (c < 0x09 && c !== 0x1e));
    return binary ? "binary" : "text";
  } finally {
    await fh.close();
  }
}

const SNIFF_NAMES: Record<Sniffed, string> = {
  zip: "a zip archive",
  gzip: "gzip-compressed data",
  shp: "a Shapefile .shp/.shx (binary)",
  json: "JSON text",
  rs: "a GeoJSON text sequence (RFC 8142)",
  dbf: "a dBase table (.dbf)",
  text: "text that is not JSON",
  binary: "binary data",
  empty: "nothing (0 bytes)",
};

function disagree(file: InputFile, expected: string, found: Sniffed, hint?: string): never {
  throw new DatasetInputError({
    file: file.name,
    offset: 0,
    reason: `the name says ${expected} but the content is ${SNIFF_NAMES[found]}`,
    hint: hint ?? "Rename the file to match its content, or upload the right file",
  });
}

/**
 * Decides which reader an upload needs: one GeoJSON-family file, one .zip, or a loose Shapefile
 * set (.shp with its .shx/.dbf/.prj/.cpg). Refuses uploads over the size limit, mixed uploads,
 * unknown extensions and files whose name and content disagree.
 */
export async function detectInput(files: InputFile[], opts: { inArchive?: string; onIgnored?: (file: InputFile) => void; maxUploadBytes?: number } = {}): Promise<DetectedInput> {
  if (files.length === 0) throw new DatasetInputError({ file: "(upload)", reason: "no file was given", hint: "Choose a GeoJSON file, a zipped Shapefile or the .shp/.shx/.dbf/.prj files" });
  if (opts.inArchive) {
    // Inside an archive: unpacked sizes were capped while unpacking; unknown files are ignored.
    // With a Shapefile inside, other files (a metadata .json, a readme) travel along unread.
    const hasShp = files.some((f) => extensionOf(f.name) === ".shp");
    const known = files.filter((f) => {
      const ext = extensionOf(f.name);
      const ok = hasShp ? INPUT_EXTENSIONS[ext] === "shapefile-part" || SHAPEFILE_EXTRAS.has(ext) : Boolean(INPUT_EXTENSIONS[ext]) || SHAPEFILE_EXTRAS.has(ext);
      if (!ok) opts.onIgnored?.(f);
      return ok;
    });
    if (known.some((f) => extensionOf(f.name) === ".zip")) {
      const inner = known.find((f) => extensionOf(f.name) === ".zip")!;
      throw new DatasetInputError({ file: inner.name, reason: "a zip archive inside the zip archive", hint: "Zip the dataset's files directly, not another archive" });
    }
    if (known.length === 0) {
      throw new DatasetInputError({ file: opts.inArchive, reason: `the archive holds no file Lissom reads (${files.map((f) => f.name.split("/").pop()).join(", ")})`, hint: "Zip the parts of one Shapefile (.shp, .shx, .dbf, .prj, .cpg) or one GeoJSON file" });
    }
    files = known;
  }
  for (const f of opts.inArchive ? [] : files) {
    const { size } = await stat(f.path);
    const limit = opts.maxUploadBytes ?? MAX_UPLOAD_BYTES;
    if (size > limit) {
      throw new DatasetInputError({
        file: f.name,
        offset: limit,
        reason: `the file is ${formatBytes(size)}, over the upload limit of ${formatBytes(limit)}`,
        hint: "Split the dataset into smaller files, or ask an administrator to raise LISSOM_MAX_UPLOAD_MB",
      });
    }
  }
  const kinds = files.map((f) => ({ f, ext: extensionOf(f.name) }));
  for (const { f, ext } of kinds) {
    if (!INPUT_EXTENSIONS[ext] && !SHAPEFILE_EXTRAS.has(ext)) {
      throw new DatasetInputError({
        file: f.name,
        reason: `the extension "${ext || "(none)"}" is not a format Lissom reads`,
        hint: "Upload .geojson, .json, .ndjson, .geojsonl, .geojsons, .zip (a zipped Shapefile) or .shp with .shx, .dbf, .prj and .cpg",
      });
    }
  }
  const single = kinds.filter(({ ext }) => INPUT_EXTENSIONS[ext] && INPUT_EXTENSIONS[ext] !== "shapefile-part");
  if (single.length > 0) {
    if (files.length > 1) {
      throw new DatasetInputError({
        file: single[0]!.f.name,
        reason: `it was uploaded together with ${files.length - 1} other file(s); one upload is one dataset`,
        hint: "Upload one GeoJSON file or one .zip at a time, or only the parts of one Shapefile",
      });
    }
    const { f, ext } = single[0]!;
    const kind = INPUT_EXTENSIONS[ext] as "geojson" | "ndjson" | "geojsonseq" | "zip";
    const found = await sniff(f.path);
    if (found === "empty") throw new DatasetInputError({ file: f.name, reason: "the file is empty (0 bytes)", hint: "Upload the file again; the copy received has no content" });
    if (kind === "zip") {
      if (found !== "zip") disagree(f, "a zip archive", found);
      return { kind, file: f };
    }
    if (found === "rs") return { kind: kind === "ndjson" ? "ndjson" : "geojsonseq", file: f };
    if (found !== "json") {
      if (found === "text") {
        throw new DatasetInputError({ file: f.name, offset: 0, reason: "the file is not JSON (it does not start with '{')", hint: "Upload GeoJSON text (RFC 7946); check the file was exported as GeoJSON" });
      }
      disagree(f, kind === "geojson" ? "GeoJSON" : "newline-delimited GeoJSON", found, found === "zip" ? "Rename the file to .zip if it is a zipped Shapefile" : undefined);
    }
    return { kind, file: f };
  }
  // A loose Shapefile set.
  const byExt = new Map<string, InputFile[]>();
  for (const { f, ext } of kinds) byExt.set(ext, [...(byExt.get(ext) ?? []), f]);
  for (const [ext, list] of byExt) {
    if (list.length > 1 && !SHAPEFILE_EXTRAS.has(ext)) {
      throw new DatasetInputError({
        file: list[1]!.name,
        reason: `a second ${ext} file in one ${opts.inArchive ? "archive" : "upload"} (also ${list[0]!.name})`,
        hint: opts.inArchive ? "Zip one Shapefile per archive" : "Upload the parts of one Shapefile at a time",
      });
    }
  }
  const shp = byExt.get(".shp")?.[0];
  if (!shp) {
    throw new DatasetInputError({ file: files[0]!.name, reason: "the Shapefile set has no .shp file", hint: "Add the .shp file (with its .shx, .dbf and .prj) to the upload, or upload them zipped" });
  }
  const stem = stemOf(shp.name);
  for (const { f, ext } of kinds) {
    if (stemOf(f.name).toLowerCase() !== stem.toLowerCase() && !SHAPEFILE_EXTRAS.has(ext)) {
      throw new DatasetInputError({ file: f.name, reason: `its name does not match ${shp.name}`, hint: "The parts of one Shapefile share one name (roads.shp, roads.shx, roads.dbf); rename or remove the stray file" });
    }
  }
  const parts: ShapefileParts = {
    shp,
    shx: byExt.get(".shx")?.[0],
    dbf: byExt.get(".dbf")?.[0],
    prj: byExt.get(".prj")?.[0],
    cpg: byExt.get(".cpg")?.[0],
    ignored: kinds.filter(({ ext }) => SHAPEFILE_EXTRAS.has(ext)).map(({ f }) => f),
  };
  await checkShapefilePartContent(parts);
  return { kind: "shapefile", parts };
}

/** Refuses parts whose content is not what their extension says. */
export async function checkShapefilePartContent(parts: ShapefileParts): Promise<void> {
  for (const [file, expected, label] of [
    [parts.shp, "shp", "a Shapefile .shp"],
    [parts.shx, "shp", "a Shapefile index .shx"],
    [parts.dbf, "dbf", "a dBase table (.dbf)"],
  ] as const) {
    if (!file) continue;
    const found = await sniff(file.path);
    if (found === "empty") throw new DatasetInputError({ file: file.name, reason: "the file is empty (0 bytes)", hint: "Export the Shapefile again; this part has no content" });
    // Binary content that is not recognisably another format goes on to the header checks,
    // which name the exact fault (a wrong file code, a bad header length).
    if (found !== expected && found !== "binary" && !(expected === "shp" && found === "dbf")) disagree(file, label, found);
  }
}

export function extensionOf(name: string): string {
  const lower = name.toLowerCase();
  if (lower.endsWith(".shp.xml")) return ".shp.xml";
  return extname(lower);
}

export function stemOf(name: string): string {
  const base = name.split(/[\\/]/).pop() ?? name;
  const ext = extensionOf(base);
  return ext ? base.slice(0, base.length - ext.length) : base;
}

export function formatBytes(n: number): string {
  if (n >= 1e9) return `${(n / 1e9).toFixed(n >= 1e10 ? 0 : 1)} GB`;
  if (n >= 1e6) return `${(n / 1e6).toFixed(n >= 1e7 ? 0 : 1)} MB`;
  if (n >= 1e3) return `${(n / 1e3).toFixed(0)} kB`;
  return `${n} bytes`;
}

import { createWriteStream } from "node:fs";
import { mkdtemp, rm } from "node:fs/promises";
import { tmpdir } from "node:os";
import { join, posix } from "node:path";
import { Transform } from "node:stream";
import { pipeline } from "node:stream/promises";
import yauzl from "yauzl";
import { DatasetInputError } from "./errors";
import { formatBytes } from "./detect";
import { MAX_COMPRESSION_RATIO, MAX_UNPACKED_FACTOR, MAX_UPLOAD_BYTES, MAX_ZIP_ENTRIES } from "./limits";
import type { InputFile } from "./types";

/** Entries that archivers add and nobody means to upload. */
function isClutter(path: string): boolean {
  const parts = path.split("/");
  const base = parts[parts.length - 1] ?? "";
  return parts.includes("__MACOSX") || base === ".DS_Store" || base.startsWith("._") || base === "Thumbs.db" || base === "";
}

export interface Unpacked {
  dir: string;
  files: InputFile[];
  /** Removes the unpacked copy. */
  dispose(): Promise<void>;
}

/** Ratios are only judged on entries at least this large: tiny files of blanks compress extremely well. */
const RATIO_MIN_BYTES = 1_000_000;

/**
 * Unpacks a .zip upload into a fresh temporary folder (under the system's temporary directory)
 * with `yauzl`, refusing before anything is written: more than `MAX_ZIP_ENTRIES` entries,
 * absolute paths or `..` (path traversal), encrypted entries, a declared total over
 * `MAX_UNPACKED_FACTOR` × the upload limit, or an entry whose declared size is more than
 * `MAX_COMPRESSION_RATIO` × its compressed size (a zip bomb). While unpacking, bytes are
 * counted, so an entry that lies about its size is stopped too (yauzl also checks each entry's
 * real size against its header). Folders inside the archive are flattened; the files keep
 * their names, and messages name them as `archive.zip/inner/name`.
 */
export async function unpackZip(file: InputFile, limits = { maxUnpacked: MAX_UNPACKED_FACTOR * MAX_UPLOAD_BYTES, maxRatio: MAX_COMPRESSION_RATIO, maxEntries: MAX_ZIP_ENTRIES }): Promise<Unpacked> {
  const refuse = (reason: string, hint: string, inner?: string): never => {
    throw new DatasetInputError({ file: inner ? `${file.name}/${inner}` : file.name, reason, hint });
  };
  let zip: yauzl.ZipFile;
  try {
    zip = await yauzl.openPromise(file.path, { lazyEntries: true, decodeStrings: false, validateEntrySizes: true, autoClose: false });
  } catch (e) {
    const message = (e as Error).message;
    const why = /end of central directory/i.test(message) ? "its central directory (at the end of the archive) is missing" : message.replace(/\.$/, "");
    return refuse(`the zip archive cannot be opened: ${why}`, "The archive is damaged or truncated; create and upload it again");
  }
  const dir = await mkdtemp(join(tmpdir(), "lissom-unzip-"));
  const dispose = async () => {
    await rm(dir, { recursive: true, force: true });
  };
  try {
    if (zip.entryCount > limits.maxEntries) {
      refuse(`the archive holds ${zip.entryCount} entries, more than the ${limits.maxEntries} allowed`, "Zip only the parts of one Shapefile (.shp, .shx, .dbf, .prj, .cpg)");
    }
    // First pass over the central directory: names, sizes, ratios; nothing written yet.
    const entries: { entry: yauzl.Entry; name: string; base: string }[] = [];
    let declared = 0;
    for await (const entry of zip.eachEntry()) {
      const name = yauzl.getFileNameLowLevel(entry.generalPurposeBitFlag, entry.fileNameRaw ?? (entry.fileName as unknown as Buffer), entry.extraFields, false);
      const problem = yauzl.validateFileName(name) ?? (/(^|\/)\.\.(\/|$)/.test(name.replace(/\\/g, "/")) || /^[a-zA-Z]:/.test(name) ? `path traversal: ${name}` : null);
      if (problem) {
        refuse(
          `the entry ${JSON.stringify(name)} points outside the archive (${problem.replace(/: .*$/, "")})`,
          "Archives with absolute paths or '..' in entry names are refused; zip the files from inside their folder",
        );
      }
      if (name.endsWith("/") || isClutter(name)) continue;
      if (entry.isEncrypted()) refuse("the entry is encrypted", "Upload an archive without a password", name);
      declared += entry.uncompressedSize;
      if (declared > limits.maxUnpacked) {
        refuse(`the archive unpacks to more than ${formatBytes(limits.maxUnpacked)}`, "Upload a smaller dataset; this archive is over the unpacked size limit", name);
      }
      if (entry.uncompressedSize >= RATIO_MIN_BYTES && entry.uncompressedSize > limits.maxRatio * Math.max(entry.compressedSize, 1)) {
        refuse(
          `the entry would unpack to ${formatBytes(entry.uncompressedSize)} from ${formatBytes(entry.compressedSize)} (ratio ${Math.round(entry.uncompressedSize / Math.max(entry.compressedSize, 1))}:1, limit ${limits.maxRatio}:1), the mark of a zip bomb`,
          "Upload the dataset's own files; this archive is refused for safety",
          name,
        );
      }
      const base = posix.basename(name.replace(/\\/g, "/"));
      if (entries.some((e) => e.base.toLowerCase() === base.toLowerCase())) {
        refuse(`two entries are named ${base} (in different folders)`, "Zip one dataset per archive", name);
      }
      entries.push({ entry, name, base });
    }
    // Second pass: unpack, counting real bytes.
    let written = 0;
    const files: InputFile[] = [];
    for (const { entry, name, base } of entries) {
      let stream;
      try {
        stream = await zip.openReadStreamPromise(entry);
      } catch (e) {
        return refuse(`the entry cannot be read (${(e as Error).message})`, "The archive is damaged; create and upload it again", name);
      }
      let entryBytes = 0;
      const counter = new Transform({
        transform(chunk: Buffer, _enc, done) {
          entryBytes += chunk.length;
          written += chunk.length;
          if (written > limits.maxUnpacked) return done(new DatasetInputError({ file: `${file.name}/${name}`, reason: `the archive unpacks to more than ${formatBytes(limits.maxUnpacked)}`, hint: "Upload a smaller dataset" }));
          if (entryBytes >= RATIO_MIN_BYTES && entryBytes > limits.maxRatio * Math.max(entry.compressedSize, 1)) {
            return done(new DatasetInputError({ file: `${file.name}/${name}`, reason: `the entry unpacks far beyond its declared size (ratio over ${limits.maxRatio}:1), the mark of a zip bomb`, hint: "Upload the dataset's own files; this archive is refused for safety" }));
          }
          done(null, chunk);
        },
      });
      const path = join(dir, base);
      try {
        await pipeline(stream, counter, createWriteStream(path));
      } catch (e) {
        if (e instanceof DatasetInputError) throw e;
        refuse(`the entry could not be unpacked (${(e as Error).message})`, "The archive is damaged or truncated; create and upload it again", name);
      }
      files.push({ path, name: `${file.name}/${name}` });
    }
    if (files.length === 0) refuse("the archive is empty", "Zip the parts of one Shapefile (.shp, .shx, .dbf, .prj, .cpg) or one GeoJSON file");
    return { dir, files, dispose };
  } catch (error) {
    await dispose();
    throw error;
  } finally {
    zip.close();
  }
}

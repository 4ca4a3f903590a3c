import { createWriteStream } from "node:fs";
import { basename, join } from "node:path";
import { Readable } from "node:stream";
import { pipeline } from "node:stream/promises";
import busboy from "busboy";
import { formatBytes } from "../formats";

export class UploadError extends Error {
  constructor(
    message: string,
    readonly status = 400,
  ) {
    super(message);
  }
}

export interface UploadedFile {
  field: string;
  name: string;
  path: string;
  size: number;
}

/**
 * Streams a multipart/form-data request to files in `dir` (never holding a whole file in
 * memory) and returns the text fields and the files. A file over `maxFileBytes` is refused.
 */
export async function receiveMultipart(
  request: Request,
  dir: string,
  options: { maxFileBytes: number; maxFiles?: number },
): Promise<{ fields: Record<string, string>; files: UploadedFile[] }> {
  const contentType = request.headers.get("content-type") ?? "";
  if (!contentType.toLowerCase().startsWith("multipart/form-data")) {
    throw new UploadError("Send the upload as multipart/form-data with the file in the field `file`.", 415);
  }
  if (!request.body) throw new UploadError("The upload has no body.");
  const fields: Record<string, string> = {};
  const files: UploadedFile[] = [];
  const writes: Promise<void>[] = [];
  const parser = busboy({
    headers: { "content-type": contentType },
    limits: { fileSize: options.maxFileBytes, files: options.maxFiles ?? 10, fields: 20, fieldSize: 64 * 1024 },
  });
  let failure: Error | undefined;
  parser.on("field", (name, value) => {
    fields[name] = value;
  });
  parser.on("file", (field, stream, info) => {
    // Only the base name is kept: a client-supplied path never reaches the file system.
    const name = basename(info.filename || "upload").replace(/[^\w.\- ]+/g, "_") || "upload";
    const path = join(dir, `${files.length}-${name}`);
    const entry: UploadedFile = { field, name, path, size: 0 };
    files.push(entry);
    stream.on("data", (chunk: Buffer) => {
      entry.size += chunk.length;
    });
    stream.on("limit", () => {
      failure ??= new UploadError(
        `${name}: the file is larger than the upload limit of ${formatBytes(options.maxFileBytes)}. Split the dataset, or ask an admin to raise LISSOM_MAX_UPLOAD_MB.`,
        413,
      );
    });
    writes.push(pipeline(stream, createWriteStream(path)));
  });
  parser.on("filesLimit", () => {
    failure ??= new UploadError(`Too many files in one upload (at most ${options.maxFiles ?? 10}).`);
  });
  await pipeline(Readable.fromWeb(request.body as never), parser);
  await Promise.all(writes);
  if (failure) throw failure;
  return { fields, files };
}


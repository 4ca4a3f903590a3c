import { rename } from "node:fs/promises";
import { join } from "node:path";
import { z } from "zod";
import { DATASET_NAME_PATTERN, DatasetInputError, ingestDataset } from "./datasets.server";
import { MAX_UPLOAD_BYTES } from "../formats";
import { makeStagingDir, removeStored } from "./storage.server";
import { receiveMultipart, UploadError } from "./upload.server";

const UploadFields = z.object({
  name: z
    .string()
    .trim()
    .regex(DATASET_NAME_PATTERN, "name: use 1–80 letters, digits, spaces, dots, dashes or underscores, starting with a letter or digit")
    .optional()
    .or(z.literal("").transform(() => undefined)),
});

export type UploadOutcome =
  | { ok: true; datasetId: string; version: number; name: string }
  | { ok: false; status: number; field?: string; message: string };

/**
 * One upload, from the console or the API: streams the files to a staging folder, checks
 * them, and stores them as the next version of the dataset. Whatever fails, the staging
 * folder goes and nothing is recorded.
 */
export async function handleDatasetUpload(request: Request, userId: string): Promise<UploadOutcome> {
  const staging = await makeStagingDir();
  try {
    const { fields, files } = await receiveMultipart(request, staging, { maxFileBytes: MAX_UPLOAD_BYTES });
    const uploads = files.filter((f) => f.field === "file");
    if (uploads.length === 0 || uploads.every((f) => f.size === 0)) {
      return { ok: false, status: 400, field: "file", message: "file: choose a GeoJSON file (or a zipped Shapefile) to upload." };
    }
    const parsed = UploadFields.safeParse(fields);
    if (!parsed.success) return { ok: false, status: 400, field: "name", message: parsed.error.issues[0]!.message };
    const name = parsed.data.name ?? defaultName(uploads[0]!.name);
    // Files keep their own names inside the version's folder; a Shapefile set needs them.
    const named = [];
    for (const f of uploads) {
      const target = join(staging, stripIndex(f.name));
      await rename(f.path, target);
      named.push({ name: stripIndex(f.name), path: target, size: f.size });
    }
    const { dataset, version } = await ingestDataset({ name, files: named, stagingDir: staging, userId });
    return { ok: true, datasetId: dataset.id, version: version.version, name: dataset.name };
  } catch (error) {
    if (error instanceof DatasetInputError) return { ok: false, status: 400, field: "file", message: error.message };
    if (error instanceof UploadError) return { ok: false, status: error.status, field: "file", message: error.message };
    throw error;
  } finally {
    // After a successful ingest the folder has been moved away; removing is then a no-op.
    await removeStored(staging);
  }
}

function defaultName(fileName: string): string {
  const base = fileName.replace(/\.(geo)?json$|\.ndjson$|\.geojsons$|\.zip$|\.shp$/i, "");
  const cleaned = base.replace(/[^\p{L}\p{N} ._-]+/gu, "-").replace(/^[^\p{L}\p{N}]+/u, "").slice(0, 80);
  return cleaned || "dataset";
}

function stripIndex(stored: string): string {
  return stored.replace(/^\d+-/, "");
}

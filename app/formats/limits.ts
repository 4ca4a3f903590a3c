/**
 * Size limits for uploads and archives. The upload limit is configurable with the
 * `LISSOM_MAX_UPLOAD_MB` environment variable (megabytes, 10^6 bytes); the default is 2048 MB,
 * so a 2 GB dataset fits. Upload routes stop receiving past it; `inspectDataset` refuses files
 * over it too.
 */
export const DEFAULT_MAX_UPLOAD_BYTES = 2048 * 1_000_000;

export function maxUploadBytes(env: Record<string, string | undefined> = process.env): number {
  const raw = env.LISSOM_MAX_UPLOAD_MB;
  if (raw === undefined || raw.trim() === "") return DEFAULT_MAX_UPLOAD_BYTES;
  const mb = Number(raw);
  if (!Number.isFinite(mb) || mb <= 0) throw new Error(`LISSOM_MAX_UPLOAD_MB must be a positive number of megabytes, not "${raw}"`);
  return Math.round(mb * 1_000_000);
}

/** The upload limit in force (read once at start-up). */
export const MAX_UPLOAD_BYTES = maxUploadBytes();

/**
 * Zip archives: the unpacked total may not exceed 4× the upload limit, and no entry may unpack
 * to more than 200× its compressed size. Shapefile parts compress 2–20× in practice (common
 * practice, from memory); zip bombs reach ratios of 1000× and more.
 */
export const MAX_UNPACKED_FACTOR = 4;
export const MAX_COMPRESSION_RATIO = 200;
/** An archive with more entries than this is refused before anything is unpacked. */
export const MAX_ZIP_ENTRIES = 1000;

/** The largest single Feature (or root member) a GeoJSON reader accepts, in bytes. */
export const MAX_FEATURE_BYTES = 64 * 1_000_000;

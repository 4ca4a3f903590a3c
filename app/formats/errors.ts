/**
 * The one error type for input files that must be refused. Its message always has the same
 * shape, so the console, the API and the CLI can show it as one line:
 *
 *   `<file>: feature <n>: <reason>. <hint>`      (a feature is known)
 *   `<file>: byte <offset>: <reason>. <hint>`    (only a byte offset is known)
 *   `<file>: <reason>. <hint>`                   (the file as a whole)
 *
 * Feature numbers count from 0 in input order (the same `index` that `readFeatures` yields and
 * that feature reports use); for Shapefiles the 1-based record number is added in the reason.
 */
export class DatasetInputError extends Error {
  override name = "DatasetInputError";
  /** The file's name as the user gave it (never a storage path). */
  readonly file: string;
  /** 0-based feature index, when the problem sits in one feature. */
  readonly feature?: number;
  /** Byte offset in the file, when known. */
  readonly offset?: number;
  /** What is wrong, without a trailing full stop. */
  readonly reason: string;
  /** What to do about it: one sentence, ending with a full stop. */
  readonly hint: string;

  constructor(init: { file: string; feature?: number; offset?: number; reason: string; hint: string }) {
    super(formatInputMessage(init));
    this.file = init.file;
    this.feature = init.feature;
    this.offset = init.offset;
    this.reason = init.reason;
    this.hint = init.hint;
  }

  /** A plain object for JSON answers (API routes, stored validation reports). */
  toJSON() {
    return { file: this.file, feature: this.feature, offset: this.offset, reason: this.reason, hint: this.hint, message: this.message };
  }
}

export function formatInputMessage(init: { file: string; feature?: number; offset?: number; reason: string; hint: string }): string {
  const where =
    init.feature !== undefined
      ? `feature ${init.feature}${init.offset !== undefined ? ` (byte ${init.offset})` : ""}: `
      : init.offset !== undefined
        ? `byte ${init.offset}: `
        : "";
  const reason = init.reason.replace(/[.\s]+$/, "");
  const hint = init.hint.trim();
  return `${init.file}: ${where}${reason}. ${/[.!?]$/.test(hint) ? hint : hint + "."}`;
}

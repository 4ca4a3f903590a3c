import { DatasetInputError } from "./errors";
import type { ResolvedCrs } from "./crs";
import type { CrsSummary, DatasetWarning, FeatureItem } from "./types";
import { checkFeature, type CheckContext } from "./validate";

/** What a reader reports besides features. */
export interface ReaderSink {
  /** Called once, before the first feature. */
  crs(summary: CrsSummary, resolved: ResolvedCrs): void;
  warn(warning: DatasetWarning): void;
  /** Attribute types declared by the file (a .dbf header), before the first feature. */
  attributes?(types: Record<string, string>): void;
  /** Extra summary fields (encoding). */
  extra?(fields: { encoding?: string; hasM?: boolean }): void;
}

/**
 * Passes raw features through `checkFeature`, turns skips and repairs into warnings, and at the
 * end refuses a dataset in which no usable line feature remained.
 */
export class FeatureGate {
  private readonly ctx: CheckContext;
  accepted = 0;
  private firstSkip?: { index: number; reason: string };
  private skippedCount = 0;
  private seen = 0;

  constructor(
    readonly file: string,
    crs: ResolvedCrs,
    private readonly sink: ReaderSink,
    /** Added to reasons (e.g. `record 4`) for formats with their own numbering. */
    private readonly label?: (index: number) => string,
  ) {
    this.ctx = { file, geographic: crs.geographic };
  }

  accept(raw: unknown, index: number): FeatureItem | null {
    this.seen++;
    let result;
    try {
      result = checkFeature(raw, index, this.ctx);
    } catch (error) {
      if (error instanceof DatasetInputError && this.label && error.feature !== undefined) {
        throw new DatasetInputError({ file: error.file, feature: error.feature, offset: error.offset, reason: `${this.label(index)}: ${error.reason}`, hint: error.hint });
      }
      throw error;
    }
    const where = this.label ? `${this.label(index)}: ` : "";
    if (result.kind === "skipped") {
      this.skippedCount++;
      this.firstSkip ??= { index, reason: result.reason };
      this.sink.warn({ feature: index, message: `${where}skipped: ${result.reason}`, action: "skipped" });
      return null;
    }
    this.accepted++;
    if (result.kind === "repaired") {
      this.sink.warn({ feature: index, message: `${where}repaired: ${result.note}`, action: "repaired" });
      return { index, feature: result.feature, repaired: result.note };
    }
    return { index, feature: result.feature };
  }

  /** Call after the last feature. */
  finish(): void {
    if (this.accepted > 0) return;
    if (this.firstSkip) {
      const where = this.label ? `${this.label(this.firstSkip.index)}: ` : "";
      throw new DatasetInputError({
        file: this.file,
        feature: this.firstSkip.index,
        reason: `${where}${this.firstSkip.reason}; no usable line features remain (${this.skippedCount} of ${this.seen} skipped)`,
        hint: "Each feature needs a line with at least two distinct vertices or a ring with at least three; fix or remove the broken features",
      });
    }
    throw new DatasetInputError({
      file: this.file,
      reason: "the dataset has no features",
      hint: "Upload a file with at least one LineString, MultiLineString, Polygon or MultiPolygon feature",
    });
  }
}

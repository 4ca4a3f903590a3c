import type { ResolvedCrs } from "./crs";
import { detectInput } from "./detect";
import type { ReaderSink } from "./gate";
import { readGeoJSON, readJsonLines } from "./geojson/read";
import { readShapefile } from "./shapefile/read";
import { unpackZip } from "./zip";
import { MAX_COMPRESSION_RATIO, MAX_UNPACKED_FACTOR, MAX_UPLOAD_BYTES, MAX_ZIP_ENTRIES } from "./limits";
import { SummaryBuilder } from "./summary";
import type { CrsSummary, DatasetSummary, DatasetWarning, FeatureItem, InputFile, InputFormat, ReadOptions } from "./types";

interface Opened {
  format: InputFormat;
  names: string[];
  features(sink: ReaderSink): AsyncGenerator<FeatureItem>;
}

async function openInput(files: InputFile[], options: ReadOptions): Promise<Opened> {
  const input = await detectInput(files, { maxUploadBytes: options.maxUploadBytes });
  const names = files.map((f) => f.name);
  if (input.kind === "zip") {
    const opened: Opened = {
      format: "shapefile",
      names,
      features: async function* (sink) {
        const maxUpload = options.maxUploadBytes ?? MAX_UPLOAD_BYTES;
        const unpacked = await unpackZip(input.file, { maxUnpacked: MAX_UNPACKED_FACTOR * maxUpload, maxRatio: MAX_COMPRESSION_RATIO, maxEntries: MAX_ZIP_ENTRIES });
        try {
          const ignored: string[] = [];
          const inner = await detectInput(unpacked.files, { inArchive: input.file.name, onIgnored: (f) => ignored.push(f.name.split("/").pop()!) });
          if (ignored.length) sink.warn({ message: `files in the archive not read: ${ignored.join(", ")}`, action: "note" });
          if (inner.kind === "zip") throw new Error("nested archive slipped through detection");
          // A zip may carry GeoJSON too; the summary names what was inside.
          opened.format = inner.kind;
          yield* openDetected(inner, options)(sink);
        } finally {
          await unpacked.dispose();
        }
      },
    };
    return opened;
  }
  const features = openDetected(input, options);
  return { format: input.kind === "shapefile" ? "shapefile" : input.kind, names, features };
}

function openDetected(input: Exclude<Awaited<ReturnType<typeof detectInput>>, { kind: "zip" }>, options: ReadOptions): (sink: ReaderSink) => AsyncGenerator<FeatureItem> {
  switch (input.kind) {
    case "geojson":
      return (sink) => readGeoJSON(input.file, options, sink);
    case "ndjson":
      return (sink) => readJsonLines(input.file, options, sink, false);
    case "geojsonseq":
      return (sink) => readJsonLines(input.file, options, sink, true);
    case "shapefile":
      return (sink) => readShapefile(input.parts, options, sink);
  }
}

/** See `index.ts`. */
export async function inspectDataset(files: InputFile[], options: ReadOptions = {}): Promise<DatasetSummary> {
  const opened = await openInput(files, options);
  let builder: SummaryBuilder | null = null;
  let crs: CrsSummary | null = null;
  const pendingWarnings: DatasetWarning[] = [];
  const declared: Record<string, string> = {};
  const extra: Partial<DatasetSummary> = {};
  const sink: ReaderSink = {
    crs(summary: CrsSummary, resolved: ResolvedCrs) {
      crs = summary;
      builder = new SummaryBuilder(opened.format, resolved.metresPerUnit, resolved.geographic);
      builder.declareAttributes(declared);
      for (const w of pendingWarnings) builder.warn(w);
    },
    warn(w) {
      options.onWarning?.(w);
      if (builder) builder.warn(w);
      else pendingWarnings.push(w);
    },
    attributes(types) {
      Object.assign(declared, types);
      builder?.declareAttributes(types);
    },
    extra(fields) {
      Object.assign(extra, fields);
    },
  };
  for await (const item of opened.features(sink)) builder!.add(item.feature);
  if (!builder || !crs) throw new Error("reader finished without reporting its CRS");
  const summary = (builder as SummaryBuilder).finish(crs, { files: opened.names, ...extra });
  if (extra.hasM) summary.hasM = true;
  return summary;
}

/** See `index.ts`. */
export async function* readFeatures(files: InputFile[], options: ReadOptions = {}): AsyncGenerator<FeatureItem> {
  const opened = await openInput(files, options);
  const sink: ReaderSink = {
    crs() {},
    warn(w) {
      options.onWarning?.(w);
    },
  };
  yield* opened.features(sink);
}

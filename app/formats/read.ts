import type { ResolvedCrs } from "./crs";
import { detectInput } from "./detect";
import { DatasetInputError } from "./errors";
import type { ReaderSink } from "./gate";
import { readGeoJSON, readJsonLines } from "./geojson/read";
import { SummaryBuilder } from "./summary";
import type { CrsSummary, DatasetSummary, DatasetWarning, FeatureItem, InputFile, InputFormat, ReadOptions } from "./types";

interface Opened {
  format: InputFormat;
  names: string[];
  features(sink: ReaderSink): AsyncGenerator<FeatureItem>;
}

async function openInput(files: InputFile[], options: ReadOptions): Promise<Opened> {
  const input = await detectInput(files);
  const names = files.map((f) => f.name);
  switch (input.kind) {
    case "geojson":
      return { format: "geojson", names, features: (sink) => readGeoJSON(input.file, options, sink) };
    case "ndjson":
      return { format: "ndjson", names, features: (sink) => readJsonLines(input.file, options, sink, false) };
    case "geojsonseq":
      return { format: "geojsonseq", names, features: (sink) => readJsonLines(input.file, options, sink, true) };
    case "zip":
    case "shapefile": {
      const file = input.kind === "zip" ? input.file.name : input.parts.shp.name;
      throw new DatasetInputError({ file, reason: "Shapefile reading is not available in this build yet", hint: "Convert the Shapefile to GeoJSON for now" });
    }
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

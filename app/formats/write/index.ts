import { writeFile } from "node:fs/promises";
import type { OutputFormat } from "../types";
import { writeAtomically } from "./file-sink";
import { writeGeoJSON, writeNdjson } from "./geojson";
import { metadataDocument, type OutputMeta, type WriteResult } from "./meta";
import { writeShapefileZip } from "../shapefile/write";
import { writeCsv } from "./csv";
import { writeGml } from "./gml";
import { writeSvg } from "./svg";

export const OUTPUT_MEDIA_TYPES: Record<OutputFormat, string> = {
  geojson: "application/geo+json",
  ndjson: "application/geo+json-seq",
  shapefile: "application/zip",
  gml: "application/gml+xml; version=3.2",
  svg: "image/svg+xml",
  csv: "text/csv",
};

/** File name extension of each output format, and the format each extension selects (CLI). */
export const OUTPUT_EXTENSIONS: Record<OutputFormat, string> = {
  geojson: ".geojson",
  ndjson: ".ndjson",
  shapefile: ".zip",
  gml: ".gml",
  svg: ".svg",
  csv: ".csv",
};

export function outputFormatForPath(path: string): OutputFormat | null {
  const lower = path.toLowerCase();
  for (const [format, ext] of Object.entries(OUTPUT_EXTENSIONS) as [OutputFormat, string][]) if (lower.endsWith(ext)) return format;
  if (lower.endsWith(".json")) return "geojson";
  if (lower.endsWith(".geojsonl") || lower.endsWith(".jsonl")) return "ndjson";
  return null;
}

/** The sidecar metadata file of formats with no room for metadata. */
export function sidecarPath(dest: string): string {
  return `${dest}.metadata.json`;
}

/** See `index.ts`. */
export async function writeOutput(format: OutputFormat, features: AsyncIterable<object>, destPath: string, meta: OutputMeta = {}): Promise<WriteResult> {
  const mediaType = OUTPUT_MEDIA_TYPES[format];
  switch (format) {
    case "geojson":
      return writeAtomically([destPath], async ([tmp]) => ({ format, mediaType, files: [destPath], ...(await writeGeoJSON(features, tmp!, meta)) }));
    case "ndjson": {
      const sidecar = sidecarPath(destPath);
      return writeAtomically([destPath, sidecar], async ([tmp, tmpMeta]) => {
        const r = await writeNdjson(features, tmp!);
        await writeFile(tmpMeta!, JSON.stringify(metadataDocument(meta, format, r.notes), null, 2) + "\n");
        return { format, mediaType, files: [destPath, sidecar], ...r };
      });
    }
    case "shapefile":
      return writeAtomically([destPath], async ([tmp]) => ({ format, mediaType, files: [destPath], ...(await writeShapefileZip(features, tmp!, meta, destPath)) }));
    case "gml":
      return writeAtomically([destPath], async ([tmp]) => ({ format, mediaType, files: [destPath], ...(await writeGml(features, tmp!, meta)) }));
    case "svg":
      return writeAtomically([destPath], async ([tmp]) => ({ format, mediaType, files: [destPath], ...(await writeSvg(features, tmp!, meta)) }));
    case "csv": {
      const sidecar = sidecarPath(destPath);
      return writeAtomically([destPath, sidecar], async ([tmp, tmpMeta]) => {
        const r = await writeCsv(features, tmp!);
        await writeFile(tmpMeta!, JSON.stringify(metadataDocument(meta, format, r.notes), null, 2) + "\n");
        return { format, mediaType, files: [destPath, sidecar], ...r };
      });
    }
    default:
      throw new Error(`unknown output format ${String(format)}`);
  }
}

export type { OutputMeta, WriteResult };

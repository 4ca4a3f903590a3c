import { readdir } from "node:fs/promises";
import { join } from "node:path";
import { readFeatures } from "../formats";
import { storagePath } from "./storage.server";

export interface PreviewData {
  /** Each part as a flat list of [x, y] in the dataset's coordinates. */
  parts: number[][][];
  bbox: [number, number, number, number] | null;
  truncated: boolean;
}

const MAX_VERTICES = 20_000;

/** Linework for the dataset page's picture, read from the stored files (a bounded sample for big sets). */
export async function datasetPreview(storageRelative: string): Promise<PreviewData> {
  const dir = storagePath(storageRelative);
  const files = (await readdir(dir)).map((name) => ({ name, path: join(dir, name) }));
  const parts: number[][][] = [];
  let vertices = 0;
  let truncated = false;
  let minX = Infinity, minY = Infinity, maxX = -Infinity, maxY = -Infinity;
  outer: for await (const { feature } of readFeatures(files)) {
    for (const line of linesOf(feature.geometry as { type: string; coordinates: unknown } | null)) {
      if (vertices + line.length > MAX_VERTICES) {
        truncated = true;
        break outer;
      }
      const part = line.map((p) => [p[0]!, p[1]!]);
      for (const [x, y] of part) {
        minX = Math.min(minX, x!); minY = Math.min(minY, y!); maxX = Math.max(maxX, x!); maxY = Math.max(maxY, y!);
      }
      vertices += part.length;
      parts.push(part);
    }
  }
  return { parts, bbox: Number.isFinite(minX) ? [minX, minY, maxX, maxY] : null, truncated };
}

function linesOf(geometry: { type: string; coordinates: unknown } | null): number[][][] {
  if (!geometry) return [];
  switch (geometry.type) {
    case "LineString":
      return [geometry.coordinates as number[][]];
    case "MultiLineString":
    case "Polygon":
      return geometry.coordinates as number[][][];
    case "MultiPolygon":
      return (geometry.coordinates as number[][][][]).flat();
    default:
      return [];
  }
}

import { copyFile, stat } from "node:fs/promises";
import { basename, join } from "node:path";
import { asc, desc, eq } from "drizzle-orm";
import { DatasetInputError, inspectDataset, type DatasetSummary } from "../formats";
import { db, schema } from "./db/client.server";
import { commitStagingDir, makeStagingDir, removeStored } from "./storage.server";

export { DatasetInputError };

export interface IngestInput {
  /** Dataset name; a name already in use makes a new version of that dataset. */
  name: string;
  /** Files already written to `stagingDir` (the upload's own folder). */
  files: { name: string; path: string; size: number }[];
  stagingDir: string;
  userId: string | null;
}

export const DATASET_NAME_PATTERN = /^[\p{L}\p{N}][\p{L}\p{N} ._-]{0,79}$/u;

/**
 * Validates an upload and stores it as the next version of its dataset. The files are checked
 * before anything is recorded; the rows are written in one transaction and the files moved into
 * place first, so a failure at any point leaves no row without files and no files without a row.
 */
export async function ingestDataset(input: IngestInput) {
  const summary = await inspectDataset(input.files.map((f) => ({ name: f.name, path: f.path })));
  const d = db();
  const versionId = crypto.randomUUID();
  const relative = `datasets/${versionId}`;
  await commitStagingDir(input.stagingDir, relative);
  const sizeBytes = input.files.reduce((sum, f) => sum + f.size, 0);
  try {
    return await d.transaction(async (tx) => {
      let dataset = await tx.query.datasets.findFirst({ where: eq(schema.datasets.name, input.name) });
      if (!dataset) {
        [dataset] = await tx.insert(schema.datasets).values({ id: crypto.randomUUID(), name: input.name, createdBy: input.userId }).returning();
      }
      const version = dataset!.latestVersion + 1;
      await tx.update(schema.datasets).set({ latestVersion: version }).where(eq(schema.datasets.id, dataset!.id));
      const [row] = await tx
        .insert(schema.datasetVersions)
        .values({
          id: versionId,
          datasetId: dataset!.id,
          version,
          fileName: input.files.map((f) => f.name).join(", "),
          format: summary.format,
          sizeBytes,
          storagePath: relative,
          summary,
          createdBy: input.userId,
        })
        .returning();
      return { dataset: { ...dataset!, latestVersion: version }, version: row! };
    });
  } catch (error) {
    await removeStored(relative);
    throw error;
  }
}

/** Stores a file from disk (a sample, a test fixture) as a dataset version. */
export async function ingestFile(name: string, path: string, userId: string | null) {
  const stagingDir = await makeStagingDir();
  try {
    const target = join(stagingDir, basename(path));
    await copyFile(path, target);
    const { size } = await stat(target);
    return await ingestDataset({ name, files: [{ name: basename(path), path: target, size }], stagingDir, userId });
  } catch (error) {
    await removeStored(stagingDir);
    throw error;
  }
}

export async function listDatasets() {
  const d = db();
  const rows = await d.query.datasets.findMany({ orderBy: [asc(schema.datasets.name)] });
  const versions = await d.query.datasetVersions.findMany({ orderBy: [desc(schema.datasetVersions.version)] });
  return rows.map((ds) => {
    const latest = versions.find((v) => v.datasetId === ds.id);
    return { ...ds, latest: latest ? { ...latest, summary: latest.summary as DatasetSummary } : null };
  });
}

export async function getDataset(id: string) {
  const d = db();
  const dataset = await d.query.datasets.findFirst({ where: eq(schema.datasets.id, id) });
  if (!dataset) return null;
  const versions = await d.query.datasetVersions.findMany({
    where: eq(schema.datasetVersions.datasetId, id),
    orderBy: [desc(schema.datasetVersions.version)],
  });
  return { ...dataset, versions: versions.map((v) => ({ ...v, summary: v.summary as DatasetSummary })) };
}

export async function getDatasetVersion(versionId: string) {
  const v = await db().query.datasetVersions.findFirst({ where: eq(schema.datasetVersions.id, versionId) });
  return v ? { ...v, summary: v.summary as DatasetSummary } : null;
}

/** The public shape of a dataset in the API: `id` first. */
export function datasetDocument(dataset: NonNullable<Awaited<ReturnType<typeof getDataset>>>) {
  return {
    id: dataset.id,
    name: dataset.name,
    latestVersion: dataset.latestVersion,
    createdAt: dataset.createdAt.toISOString(),
    versions: dataset.versions.map((v) => ({
      id: v.id,
      version: v.version,
      fileName: v.fileName,
      format: v.format,
      sizeBytes: v.sizeBytes,
      createdAt: v.createdAt.toISOString(),
      summary: v.summary,
    })),
  };
}

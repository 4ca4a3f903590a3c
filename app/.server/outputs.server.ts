import { createReadStream } from "node:fs";
import { Readable } from "node:stream";
import { desc, eq } from "drizzle-orm";
import { db, schema } from "./db/client.server";
import { can } from "./permissions.server";
import { storagePath } from "./storage.server";

export async function publishOutput(outputId: string, userId: string, published: boolean) {
  const d = db();
  const out = await d.query.outputs.findFirst({ where: eq(schema.outputs.id, outputId) });
  if (!out) return null;
  await d
    .update(schema.outputs)
    .set({ published, publishedAt: published ? new Date() : null, publishedBy: published ? userId : null })
    .where(eq(schema.outputs.id, outputId));
  return { ...out, published };
}

/** What consumers see: published outputs, newest first, with the dataset they came from. */
export async function listPublishedOutputs() {
  const rows = await db()
    .select({ output: schema.outputs, job: schema.jobs, datasetName: schema.datasets.name, datasetVersion: schema.datasetVersions.version })
    .from(schema.outputs)
    .innerJoin(schema.jobs, eq(schema.outputs.jobId, schema.jobs.id))
    .innerJoin(schema.datasetVersions, eq(schema.jobs.datasetVersionId, schema.datasetVersions.id))
    .innerJoin(schema.datasets, eq(schema.datasetVersions.datasetId, schema.datasets.id))
    .where(eq(schema.outputs.published, true))
    .orderBy(desc(schema.outputs.publishedAt));
  return rows.map((r) => ({ ...r.output, steps: r.job.steps as { step: string; params: Record<string, unknown> }[], datasetName: r.datasetName, datasetVersion: r.datasetVersion }));
}

/**
 * The output file if `role` may download it: consumers only what is published, roles that can
 * read jobs anything. Returns null for both "missing" and "not yours", so ids cannot be probed.
 */
export async function openOutputForDownload(outputId: string, role: string) {
  const out = await db().query.outputs.findFirst({ where: eq(schema.outputs.id, outputId) });
  if (!out) return null;
  if (!out.published && !can(role, { job: ["read"] })) return null;
  const stream = Readable.toWeb(createReadStream(storagePath(out.storagePath))) as ReadableStream;
  return { output: out, stream };
}

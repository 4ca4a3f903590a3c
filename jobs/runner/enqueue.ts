import { and, asc, eq, ne } from "drizzle-orm";
import { db, schema } from "../../app/.server/db/client.server";
import { DEFAULT_RETRY_POLICY, enqueueFlow, enqueueJob, type RetryPolicy } from "../queue";

type JobRow = typeof schema.jobs.$inferSelect;

/**
 * Retries of a job: its own `maxAttempts` (set from its definition, or by the caller, at
 * submission) and the backoff of its definition; 3 attempts, 2 s when there is no definition.
 */
export async function retryPolicyOf(job: Pick<JobRow, "maxAttempts" | "definitionId">): Promise<RetryPolicy> {
  let backoffMs = DEFAULT_RETRY_POLICY.backoffMs;
  if (job.definitionId) {
    const def = await db().query.definitions.findFirst({ columns: { backoffMs: true }, where: eq(schema.definitions.id, job.definitionId) });
    if (def) backoffMs = def.backoffMs;
  }
  return { attempts: job.maxAttempts, backoffMs };
}

/** Queues a (not fanned-out) job under the queue id its row names. */
export async function enqueueRow(job: JobRow): Promise<void> {
  await enqueueJob(job.id, job.queueId ?? job.id, { priority: job.priority, policy: await retryPolicyOf(job) });
}

/** A fresh suffix for the queue ids of one round of a flow. */
function round(): string {
  return `${Date.now().toString(36)}${Math.random().toString(36).slice(2, 6)}`;
}

/**
 * Queues the chunks of a fanned-out job that have not succeeded yet, as one flow whose parent
 * entry merges them. The rows get their new queue ids first (the database is the truth: if
 * Redis refuses the flow, the next reconciliation finds the merge entry missing and tries again).
 * Returns how many chunks were queued.
 */
export async function enqueueChunks(parentId: string): Promise<number> {
  const d = db();
  const parent = await d.query.jobs.findFirst({ where: eq(schema.jobs.id, parentId) });
  if (!parent) throw new Error(`Job ${parentId} does not exist.`);
  const chunks = await d.query.jobs.findMany({ where: and(eq(schema.jobs.parentId, parentId), ne(schema.jobs.status, "successful")), orderBy: [asc(schema.jobs.chunkIndex)] });
  const r = round();
  const mergeId = `${parentId}.merge-${r}`;
  const entries = chunks.map((c) => ({ chunkId: c.id, queueId: `${c.id}.${r}`, start: c.featureStart ?? 0, end: c.featureEnd ?? 0 }));
  const now = new Date();
  await d.transaction(async (tx) => {
    await tx.update(schema.jobs).set({ queueId: mergeId, updatedAt: now }).where(eq(schema.jobs.id, parentId));
    for (const e of entries) {
      await tx
        .update(schema.jobs)
        .set({ queueId: e.queueId, status: "accepted", progress: 0, featuresDone: 0, message: null, finishedAt: null, updatedAt: now })
        .where(eq(schema.jobs.id, e.chunkId));
    }
  });
  await enqueueFlow({ jobId: parentId, queueId: mergeId, priority: parent.priority, policy: await retryPolicyOf(parent) }, entries);
  return entries.length;
}

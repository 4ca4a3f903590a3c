import { stat } from "node:fs/promises";
import { and, asc, count, desc, eq, gt, inArray, isNull, lt, ne, type SQL } from "drizzle-orm";
import { QueueUnavailableError, entryState, queueReady, queueReadySoon, removeQueued } from "../../jobs/queue";
import { chunkRows, splitFile } from "../../jobs/run-job";
import { enqueueChunks, enqueueRow } from "../../jobs/runner/enqueue";
import { runnerSettings } from "../../jobs/runner/settings";
import { db, schema } from "./db/client.server";
import { logger } from "./logger.server";
import { removeStored, storagePath } from "./storage.server";

export type JobStatus = (typeof schema.jobs.$inferSelect)["status"];
export type JobRow = typeof schema.jobs.$inferSelect;
export type StepSpec = { step: string; params: Record<string, unknown> };

export class JobStateError extends Error {}

/**
 * Records a job and then queues it: the row exists before its queue entry (DESIGN.md). If the
 * queue refuses, the row is removed again and the caller answers 503.
 */
export async function submitJob(input: {
  processId: string;
  steps: StepSpec[];
  inputs: Record<string, unknown>;
  datasetVersionId: string;
  definitionId?: string | null;
  userId: string | null;
  priority?: number;
  /** Tries in all; retry delays come from the definition (jobs/runner/enqueue.ts). */
  maxAttempts?: number;
  scheduleId?: string | null;
}): Promise<JobRow> {
  const d = db();
  const id = crypto.randomUUID();
  const [row] = await d
    .insert(schema.jobs)
    .values({
      id,
      processId: input.processId,
      queueId: id,
      inputs: input.inputs,
      steps: input.steps,
      datasetVersionId: input.datasetVersionId,
      definitionId: input.definitionId ?? null,
      submittedBy: input.userId,
      priority: input.priority ?? 0,
      maxAttempts: input.maxAttempts ?? 3,
      scheduleId: input.scheduleId ?? null,
    })
    .returning();
  try {
    await enqueueRow(row!);
  } catch (error) {
    await d.delete(schema.jobs).where(eq(schema.jobs.id, id));
    throw error;
  }
  await d.insert(schema.logEntries).values({ jobId: id, attempt: null, time: new Date(), level: "info", message: "Accepted and queued." });
  return row!;
}

/** Jobs as people submitted them: the chunk jobs of a fanned-out job are listed on its page only. */
const topLevel = isNull(schema.jobs.parentId);

export async function listJobs(options: { status?: JobStatus[]; limit?: number; offset?: number } = {}) {
  const where = options.status?.length ? and(topLevel, inArray(schema.jobs.status, options.status)) : topLevel;
  return selectJobs(where, { limit: options.limit ?? 50, offset: options.offset ?? 0 });
}

export async function countJobsByStatus(): Promise<Record<JobStatus, number>> {
  const rows = await db().select({ status: schema.jobs.status, n: count() }).from(schema.jobs).where(topLevel).groupBy(schema.jobs.status);
  const out = { accepted: 0, running: 0, successful: 0, failed: 0, dismissed: 0 } as Record<JobStatus, number>;
  for (const r of rows) out[r.status] = r.n;
  return out;
}

export async function getJob(id: string) {
  const [row] = await selectJobs(eq(schema.jobs.id, id), { limit: 1, offset: 0 });
  return row ?? null;
}

/** Jobs with the names people need beside them: dataset, version, submitter; newest first. */
async function selectJobs(where: SQL | undefined, page: { limit: number; offset: number }) {
  const rows = await db()
    .select({
      job: schema.jobs,
      datasetId: schema.datasets.id,
      datasetName: schema.datasets.name,
      datasetVersion: schema.datasetVersions.version,
      submittedBy: schema.user.email,
    })
    .from(schema.jobs)
    .innerJoin(schema.datasetVersions, eq(schema.jobs.datasetVersionId, schema.datasetVersions.id))
    .innerJoin(schema.datasets, eq(schema.datasetVersions.datasetId, schema.datasets.id))
    .leftJoin(schema.user, eq(schema.jobs.submittedBy, schema.user.id))
    .where(where)
    .orderBy(desc(schema.jobs.createdAt))
    .limit(page.limit)
    .offset(page.offset);
  return rows.map((r) => ({
    ...r.job,
    datasetId: r.datasetId,
    datasetName: r.datasetName,
    datasetVersion: r.datasetVersion,
    submittedByEmail: r.submittedBy,
  }));
}

/** Log entries after `afterId` (for tailing), oldest first. */
export async function jobLogEntries(jobId: string, afterId = 0, limit = 500) {
  return db().query.logEntries.findMany({
    where: and(eq(schema.logEntries.jobId, jobId), gt(schema.logEntries.id, afterId)),
    orderBy: [asc(schema.logEntries.id)],
    limit,
  });
}

export async function jobFeatureReports(jobId: string, limit = 1000) {
  return db().query.featureReports.findMany({
    where: eq(schema.featureReports.jobId, jobId),
    orderBy: [asc(schema.featureReports.featureIndex)],
    limit,
  });
}

export async function jobAttempts(jobId: string) {
  return db().query.attempts.findMany({ where: eq(schema.attempts.jobId, jobId), orderBy: [asc(schema.attempts.number)] });
}

export async function jobOutputs(jobId: string) {
  return db().query.outputs.findMany({ where: eq(schema.outputs.jobId, jobId), orderBy: [asc(schema.outputs.createdAt)] });
}

/** The chunk jobs of a fanned-out job, in input order (empty for a job that was not cut). */
export async function jobChunks(jobId: string) {
  const chunks = await chunkRows(jobId);
  if (chunks.length === 0) return [];
  const tries = await db().query.attempts.findMany({ columns: { jobId: true, number: true }, where: inArray(schema.attempts.jobId, chunks.map((c) => c.id)) });
  return chunks.map((c) => ({
    id: c.id,
    index: c.chunkIndex!,
    featureStart: c.featureStart!,
    featureEnd: c.featureEnd!,
    status: c.status,
    progress: c.progress,
    featuresDone: c.featuresDone,
    featuresTotal: c.featuresTotal,
    message: c.message,
    attempts: tries.filter((t) => t.jobId === c.id).length,
  }));
}

/**
 * Dismisses a job (OGC API - Processes "dismiss"): a queued job leaves the queue, a running one
 * stops at its next feature and publishes nothing. Finished jobs cannot be dismissed. The
 * chunks of a fanned-out job are dismissed with it; their queue entries find the job dismissed
 * and end without work.
 */
export async function dismissJob(jobId: string, userEmail: string) {
  const d = db();
  const job = await d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
  if (!job) return null;
  if (job.parentId) throw new JobStateError(`Job ${jobId} is a chunk of job ${job.parentId}; dismiss that job instead.`);
  if (job.status === "successful" || job.status === "failed" || job.status === "dismissed") {
    throw new JobStateError(`Job ${jobId} is already ${job.status}; only accepted or running jobs can be dismissed.`);
  }
  const now = new Date();
  await d.update(schema.jobs).set({ status: "dismissed", message: `Dismissed by ${userEmail}.`, finishedAt: now, updatedAt: now }).where(eq(schema.jobs.id, jobId));
  const chunks = await d
    .update(schema.jobs)
    .set({ status: "dismissed", message: `Dismissed with its job by ${userEmail}.`, finishedAt: now, updatedAt: now })
    .where(and(eq(schema.jobs.parentId, jobId), inArray(schema.jobs.status, ["accepted", "running"])))
    .returning({ id: schema.jobs.id });
  await d.insert(schema.logEntries).values({ jobId, attempt: null, time: now, level: "info", message: `Dismissed by ${userEmail}.` });
  const hasChunks = chunks.length > 0 || (await chunkRows(jobId)).length > 0;
  if (job.queueId && !hasChunks) {
    try {
      await removeQueued(job.queueId);
    } catch (error) {
      // The worker also checks the row before it starts, so a queue that is away cannot run it.
      logger.warn({ err: error, jobId }, "could not remove a dismissed job from the queue");
    }
  }
  return d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
}

/**
 * An operator's retry of a failed or dismissed job: a new attempt of the whole job, from the
 * dataset again (a fanned-out job is cut again; its earlier chunks are dropped).
 */
export async function retryJob(jobId: string, userEmail: string) {
  const d = db();
  const job = await d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
  if (!job) return null;
  if (job.parentId) throw new JobStateError(`Job ${jobId} is a chunk of job ${job.parentId}; retry that job or its failed chunks.`);
  if (job.status !== "failed" && job.status !== "dismissed") {
    throw new JobStateError(`Job ${jobId} is ${job.status}; only failed or dismissed jobs can be retried.`);
  }
  const tries = await d.query.attempts.findMany({ columns: { number: true }, where: eq(schema.attempts.jobId, jobId) });
  const queueId = `${jobId}.retry${tries.length + 1}-${Date.now().toString(36)}`;
  const now = new Date();
  const [updated] = await d
    .update(schema.jobs)
    .set({ status: "accepted", queueId, progress: 0, featuresDone: 0, message: `Retried by ${userEmail}.`, finishedAt: null, updatedAt: now })
    .where(eq(schema.jobs.id, jobId))
    .returning();
  try {
    await enqueueRow(updated!);
  } catch (error) {
    await d.update(schema.jobs).set({ status: job.status, queueId: job.queueId, message: job.message, finishedAt: job.finishedAt }).where(eq(schema.jobs.id, jobId));
    throw error;
  }
  // The whole job runs again: earlier chunks and their files go (the queue entry re-cuts it).
  await d.delete(schema.jobs).where(eq(schema.jobs.parentId, jobId));
  await removeStored(`work/${jobId}`);
  await d.insert(schema.logEntries).values({ jobId, attempt: null, time: now, level: "info", message: `Retried by ${userEmail}.` });
  return d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
}

/**
 * An operator's retry of only the chunks of a fanned-out job that did not succeed; the chunks
 * that did keep their output, and the job is merged again once the retried ones finish.
 */
export async function retryFailedChunks(jobId: string, userEmail: string) {
  const d = db();
  const job = await d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
  if (!job) return null;
  if (job.status !== "failed" && job.status !== "dismissed") {
    throw new JobStateError(`Job ${jobId} is ${job.status}; failed chunks can be retried once the job has failed or was dismissed.`);
  }
  const chunks = await chunkRows(jobId);
  const retried = chunks.filter((c) => c.status !== "successful");
  if (chunks.length === 0) throw new JobStateError(`Job ${jobId} was not cut into chunks; retry the whole job.`);
  if (retried.length === 0) throw new JobStateError(`Every chunk of job ${jobId} succeeded; retry the whole job instead.`);
  for (const c of retried) {
    try {
      await stat(storagePath(splitFile(jobId, c.chunkIndex!)));
    } catch {
      throw new JobStateError(`The input of chunk ${c.chunkIndex! + 1} is no longer stored; retry the whole job.`);
    }
  }
  const now = new Date();
  await d.update(schema.jobs).set({ status: "accepted", progress: 0, message: `${retried.length} chunk(s) retried by ${userEmail}.`, finishedAt: null, updatedAt: now }).where(eq(schema.jobs.id, jobId));
  try {
    await enqueueChunks(jobId);
  } catch (error) {
    await d.update(schema.jobs).set({ status: job.status, message: job.message, finishedAt: job.finishedAt }).where(eq(schema.jobs.id, jobId));
    await d
      .update(schema.jobs)
      .set({ status: "failed", message: "Could not be queued again." })
      .where(and(eq(schema.jobs.parentId, jobId), ne(schema.jobs.status, "successful")));
    throw error;
  }
  await d.insert(schema.logEntries).values({
    jobId,
    attempt: null,
    time: now,
    level: "info",
    message: `Retried chunk${retried.length === 1 ? "" : "s"} ${retried.map((c) => c.chunkIndex! + 1).join(", ")} by ${userEmail}.`,
  });
  return d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
}

/**
 * Jobs the database says are accepted or running but the queue no longer holds (the in-memory
 * queue forgets everything on exit; a Redis restarted without persistence does too) are queued
 * again: under the same queue id when the entry is simply gone (adding an id twice makes one
 * entry, so a submission in flight is not doubled), under a new one when the queue holds it as
 * finished. A running job whose process died restarts from scratch (its staging files are never
 * published); a fanned-out job queues its unfinished chunks and a new merge. Rows touched within
 * `minAgeMs` are left alone (they are being submitted or worked on right now).
 */
export async function requeueLostJobs(options: { minAgeMs?: number } = {}): Promise<number> {
  const d = db();
  // BullMQ would wait for a Redis that is away instead of failing: do not start then.
  if (!(await queueReadySoon())) throw new QueueUnavailableError(new Error("Redis is not reachable"));
  const cutoff = new Date(Date.now() - (options.minAgeMs ?? 0));
  const open = await d.query.jobs.findMany({
    where: and(topLevel, inArray(schema.jobs.status, ["accepted", "running"]), options.minAgeMs ? lt(schema.jobs.updatedAt, cutoff) : undefined),
  });
  let requeued = 0;
  for (const job of open) {
    const queueId = job.queueId ?? job.id;
    const state = await entryState(queueId);
    if (state !== "absent" && state !== "completed" && state !== "failed") continue;
    const hasChunks = (await chunkRows(job.id)).length > 0;
    if (hasChunks) {
      await enqueueChunks(job.id);
    } else {
      const fresh = state === "absent" ? queueId : `${job.id}.restart-${Date.now().toString(36)}`;
      const [row] = await d
        .update(schema.jobs)
        .set({ status: "accepted", queueId: fresh, updatedAt: new Date() })
        .where(and(eq(schema.jobs.id, job.id), eq(schema.jobs.updatedAt, job.updatedAt), inArray(schema.jobs.status, ["accepted", "running"])))
        .returning();
      if (!row) continue; // changed meanwhile: its owner knows better
      await enqueueRow(row);
    }
    await d.insert(schema.logEntries).values({ jobId: job.id, attempt: null, time: new Date(), level: "warn", message: "Queued again: the queue had lost it." });
    requeued++;
  }
  return requeued;
}

let reconciler: NodeJS.Timeout | undefined;

/**
 * Scaled mode: every LISSOM_RECONCILE_MS, while Redis is reachable, queue again what a Redis
 * restart lost (`requeueLostJobs`), so nothing accepted is lost once Redis is back.
 */
export function startReconciler(): void {
  if (reconciler) return;
  const every = runnerSettings().LISSOM_RECONCILE_MS;
  let running = false;
  reconciler = setInterval(() => {
    if (running || !queueReady()) return;
    running = true;
    requeueLostJobs({ minAgeMs: Math.max(2000, every / 2) })
      .then((n) => {
        if (n > 0) logger.warn({ jobs: n }, "queued again jobs that the queue had lost");
      })
      .catch((error: unknown) => logger.warn({ err: error }, "could not check the queue for lost jobs"))
      .finally(() => {
        running = false;
      });
  }, every);
  reconciler.unref();
}

export function stopReconciler(): void {
  if (reconciler) clearInterval(reconciler);
  reconciler = undefined;
}

/** The OGC API - Processes status document of a job. */
export function statusDocument(job: JobRow) {
  return {
    jobID: job.id,
    processID: job.processId,
    type: "process",
    status: job.status,
    message: job.message ?? undefined,
    created: job.createdAt.toISOString(),
    started: job.startedAt?.toISOString(),
    finished: job.finishedAt?.toISOString(),
    updated: job.updatedAt.toISOString(),
    progress: job.progress,
    links: [
      { href: `/api/jobs/${job.id}`, rel: "self", type: "application/json", title: "job status" },
      ...(job.status === "successful"
        ? [{ href: `/api/jobs/${job.id}/results`, rel: "http://www.opengis.net/def/rel/ogc/1.0/results", type: "application/json", title: "job results" }]
        : []),
    ],
  };
}

import { and, asc, count, desc, eq, gt, inArray, type SQL } from "drizzle-orm";
import { enqueueJob, isQueued, removeQueued } from "../../jobs/queue";
import { db, schema } from "./db/client.server";
import { logger } from "./logger.server";

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
  maxAttempts?: number;
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
    })
    .returning();
  try {
    await enqueueJob(id, id, { priority: row!.priority, attempts: row!.maxAttempts });
  } catch (error) {
    await d.delete(schema.jobs).where(eq(schema.jobs.id, id));
    throw error;
  }
  await d.insert(schema.logEntries).values({ jobId: id, attempt: null, time: new Date(), level: "info", message: "Accepted and queued." });
  return row!;
}

export async function listJobs(options: { status?: JobStatus[]; limit?: number; offset?: number } = {}) {
  const where = options.status?.length ? inArray(schema.jobs.status, options.status) : undefined;
  return selectJobs(where, { limit: options.limit ?? 50, offset: options.offset ?? 0 });
}

export async function countJobsByStatus(): Promise<Record<JobStatus, number>> {
  const rows = await db().select({ status: schema.jobs.status, n: count() }).from(schema.jobs).groupBy(schema.jobs.status);
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

/**
 * Dismisses a job (OGC API - Processes "dismiss"): a queued job leaves the queue, a running one
 * stops at its next feature and publishes nothing. Finished jobs cannot be dismissed.
 */
export async function dismissJob(jobId: string, userEmail: string) {
  const d = db();
  const job = await d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
  if (!job) return null;
  if (job.status === "successful" || job.status === "failed" || job.status === "dismissed") {
    throw new JobStateError(`Job ${jobId} is already ${job.status}; only accepted or running jobs can be dismissed.`);
  }
  const now = new Date();
  await d.update(schema.jobs).set({ status: "dismissed", message: `Dismissed by ${userEmail}.`, finishedAt: now, updatedAt: now }).where(eq(schema.jobs.id, jobId));
  await d.insert(schema.logEntries).values({ jobId, attempt: null, time: now, level: "info", message: `Dismissed by ${userEmail}.` });
  if (job.queueId) {
    try {
      await removeQueued(job.queueId);
    } catch (error) {
      // The worker also checks the row before it starts, so a queue that is away cannot run it.
      logger.warn({ err: error, jobId }, "could not remove a dismissed job from the queue");
    }
  }
  return d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
}

/** An operator's retry of a failed or dismissed job: a new attempt of the same job. */
export async function retryJob(jobId: string, userEmail: string) {
  const d = db();
  const job = await d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
  if (!job) return null;
  if (job.status !== "failed" && job.status !== "dismissed") {
    throw new JobStateError(`Job ${jobId} is ${job.status}; only failed or dismissed jobs can be retried.`);
  }
  const tries = await d.query.attempts.findMany({ columns: { number: true }, where: eq(schema.attempts.jobId, jobId) });
  const queueId = `${jobId}.retry${tries.length + 1}`;
  const now = new Date();
  await d.update(schema.jobs).set({ status: "accepted", queueId, progress: 0, featuresDone: 0, message: `Retried by ${userEmail}.`, finishedAt: null, updatedAt: now }).where(eq(schema.jobs.id, jobId));
  try {
    await enqueueJob(jobId, queueId, { priority: job.priority, attempts: job.maxAttempts });
  } catch (error) {
    await d.update(schema.jobs).set({ status: job.status, queueId: job.queueId, message: job.message, finishedAt: job.finishedAt }).where(eq(schema.jobs.id, jobId));
    throw error;
  }
  await d.insert(schema.logEntries).values({ jobId, attempt: null, time: now, level: "info", message: `Retried by ${userEmail}.` });
  return d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
}

/**
 * At boot: jobs the database says are accepted or running but the queue no longer holds (the
 * in-memory queue forgets everything on exit) are queued again. A running job whose process
 * died restarts from scratch; its half-written staging files are never published.
 */
export async function requeueLostJobs(): Promise<number> {
  const d = db();
  const open = await d.query.jobs.findMany({ where: inArray(schema.jobs.status, ["accepted", "running"]) });
  let requeued = 0;
  for (const job of open) {
    const queueId = job.queueId ?? job.id;
    if (await isQueued(queueId)) continue;
    const fresh = `${job.id}.restart${Date.now()}`;
    await d.update(schema.jobs).set({ status: "accepted", queueId: fresh, updatedAt: new Date() }).where(eq(schema.jobs.id, job.id));
    await enqueueJob(job.id, fresh, { priority: job.priority, attempts: job.maxAttempts });
    await d.insert(schema.logEntries).values({ jobId: job.id, attempt: null, time: new Date(), level: "warn", message: "Queued again after a restart." });
    requeued++;
  }
  return requeued;
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

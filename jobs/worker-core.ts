import { UnrecoverableError, Worker, type Job } from "bullmq";
import { eq } from "drizzle-orm";
import { db, schema } from "../app/.server/db/client.server";
import { logger } from "../app/.server/logger.server";
import { jobLog } from "./job-log";
import { QUEUE_NAME, type QueuedJobData } from "./queue";
import { createRedisConnection } from "./redis";
import { PermanentJobError, runJob } from "./run-job";

/**
 * The BullMQ worker of Lissom jobs, used both inside the web process (embedded) and by
 * `npm run worker` (scaled). The database row is the truth; the queue entry only says "run it".
 */
export function startJobWorker(options: { concurrency?: number } = {}): Worker<QueuedJobData> {
  const worker = new Worker<QueuedJobData>(QUEUE_NAME, processQueuedJob, {
    connection: createRedisConnection(),
    concurrency: options.concurrency ?? 1,
  });
  worker.on("error", (error) => logger.error({ err: error }, "job worker error"));
  worker.on("failed", (job, error) => {
    if (job) void recordFailure(job, error);
  });
  return worker;
}

async function processQueuedJob(job: Job<QueuedJobData>): Promise<string> {
  const attempt = await nextAttemptNumber(job.data.jobId);
  try {
    return await runJob(job.data.jobId, {
      attempt,
      onProgress: (percent) => job.updateProgress(percent),
    });
  } catch (error) {
    if (error instanceof PermanentJobError) throw new UnrecoverableError(error.message);
    throw error;
  }
}

async function nextAttemptNumber(jobId: string): Promise<number> {
  const rows = await db().query.attempts.findMany({ columns: { number: true }, where: eq(schema.attempts.jobId, jobId) });
  return rows.reduce((max, r) => Math.max(max, r.number), 0) + 1;
}

/** After a failed attempt: mark it, and mark the job failed when no retry is left. */
async function recordFailure(job: Job<QueuedJobData>, error: Error): Promise<void> {
  const { jobId } = job.data;
  const d = db();
  const now = new Date();
  const attempts = await d.query.attempts.findMany({ where: eq(schema.attempts.jobId, jobId) });
  const current = attempts.reduce((a, b) => (b.number > (a?.number ?? 0) ? b : a), attempts[0]);
  if (current && current.status === "running") {
    await d.update(schema.attempts).set({ status: "failed", error: error.message, finishedAt: now }).where(eq(schema.attempts.id, current.id));
  }
  const final = error instanceof UnrecoverableError || job.attemptsMade >= (job.opts.attempts ?? 1);
  const log = jobLog(jobId, current?.number ?? null);
  const row = await d.query.jobs.findFirst({ columns: { status: true }, where: eq(schema.jobs.id, jobId) });
  if (!row || row.status === "dismissed") return;
  if (final) {
    await d.update(schema.jobs).set({ status: "failed", message: error.message, finishedAt: now, updatedAt: now }).where(eq(schema.jobs.id, jobId));
    await log.error(`Failed: ${error.message}`);
  } else {
    await d.update(schema.jobs).set({ status: "accepted", message: `Attempt failed (${error.message}); retrying.`, updatedAt: now }).where(eq(schema.jobs.id, jobId));
    await log.warn(`Attempt failed: ${error.message}. It will be retried.`);
  }
}

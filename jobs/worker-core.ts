import { UnrecoverableError, WaitingError, Worker, type Job } from "bullmq";
import { and, desc, eq, sql } from "drizzle-orm";
import { db, schema } from "../app/.server/db/client.server";
import { logger } from "../app/.server/logger.server";
import { jobLog } from "./job-log";
import { QUEUE_NAME, queuePrefix, type EntryName, type QueuedJobData } from "./queue";
import { createRedisConnection, queueBackend } from "./redis";
import { PermanentJobError, runChunk, runJob, runMerge, type RunOutcome } from "./run-job";
import { backoffStrategy } from "./runner/backoff";
import { startHeartbeat, type Heartbeat } from "./runner/heartbeat";
import { newControl } from "./runner/pipeline";
import { runnerSettings } from "./runner/settings";
import { requestStop, ThreadPool } from "./runner/thread-pool";

export interface JobWorkerOptions {
  concurrency?: number;
  /** BullMQ lock duration (ms); the stalled check runs at the same interval. Default LISSOM_LOCK_MS. */
  lockDuration?: number;
  /** Heartbeat interval (ms). Default LISSOM_HEARTBEAT_MS. */
  heartbeatMs?: number;
  /** Run pipeline tasks on the worker's own thread instead of worker threads (tests only). */
  inline?: boolean;
  /** Another step runner module with the signature of jobs/steps runFeatureStep (tests). */
  stepsModule?: string;
}

interface WorkerState {
  pool: ThreadPool | undefined;
  heartbeat: Promise<Heartbeat | undefined>;
  active: Map<string, Int32Array>;
  stopping: boolean;
}

const states = new WeakMap<Worker, WorkerState>();
const recorded = new WeakSet<Error>();

/**
 * The BullMQ worker of Lissom jobs, used both inside the web process (embedded) and by
 * `npm run worker` (scaled). The database row is the truth; the queue entry only says "run it".
 *
 * - Features are fitted in worker threads (runner/thread-pool.ts), one per job slot, so this
 *   thread stays free to renew locks, write progress and heartbeats.
 * - An entry runs only if the row's `queueId` names it; other entries are superseded.
 * - Errors: input that no retry can fix fails at once (UnrecoverableError); anything else
 *   (storage, database, Redis, a crashed thread) is retried with exponential backoff and
 *   jitter (runner/backoff.ts). A step that throws on one feature is not an error of the job:
 *   the feature is reported and the others go on (runner/pipeline.ts).
 * - `shutdownJobWorker` stops running jobs after their current feature and gives their entries
 *   back to the queue without using up an attempt.
 */
export function startJobWorker(options: JobWorkerOptions = {}): Worker<QueuedJobData> {
  const settings = runnerSettings();
  const concurrency = options.concurrency ?? 1;
  const lockDuration = options.lockDuration ?? settings.LISSOM_LOCK_MS;
  const state: WorkerState = {
    pool: options.inline ? undefined : new ThreadPool(concurrency),
    heartbeat: Promise.resolve(undefined),
    active: new Map(),
    stopping: false,
  };
  const worker = new Worker<QueuedJobData>(QUEUE_NAME, (job, token) => processEntry(job, token, state, options), {
    connection: createRedisConnection(),
    prefix: queuePrefix(),
    concurrency,
    lockDuration,
    stalledInterval: lockDuration,
    settings: { backoffStrategy },
  });
  states.set(worker, state);
  state.pool?.warm().catch((error: unknown) => logger.error({ err: error }, "could not start the runner threads; jobs will try again"));
  worker.on("error", (error) => logger.error({ err: error }, "job worker error"));
  // Failures of the processor are recorded before it returns (so a flow's merge entry never
  // runs ahead of a chunk's failed status); this catches the others, such as an entry that
  // stalled more often than BullMQ allows.
  worker.on("failed", (job, error) => {
    if (job && !recorded.has(error)) void recordFailure(job, error, job.attemptsMade).catch((e: unknown) => logger.error({ err: e }, "could not record a failed attempt"));
  });
  state.heartbeat = startHeartbeat({ mode: queueBackend(), concurrency, intervalMs: options.heartbeatMs ?? settings.LISSOM_HEARTBEAT_MS }).catch((error: unknown) => {
    logger.error({ err: error }, "could not register the worker's heartbeat");
    return undefined;
  });
  return worker;
}

/**
 * Stops a worker: no new entries are taken, running ones stop after their current feature and
 * go back to the queue (another worker, or this one after a restart, picks them up), threads
 * end and the heartbeat row records the stop. Returns false if the jobs did not let go within
 * `limitMs` (their entries then come back through BullMQ's stalled check).
 */
export async function shutdownJobWorker(worker: Worker, limitMs = runnerSettings().LISSOM_SHUTDOWN_MS): Promise<boolean> {
  const state = states.get(worker);
  if (state) {
    state.stopping = true;
    for (const control of state.active.values()) requestStop(control);
  }
  let timer: NodeJS.Timeout | undefined;
  const inTime = await Promise.race([
    worker.close().then(() => true),
    new Promise<boolean>((resolve) => {
      timer = setTimeout(() => resolve(false), limitMs);
    }),
  ]);
  clearTimeout(timer);
  if (state) {
    await state.pool?.close();
    await (await state.heartbeat)?.stop().catch(() => undefined);
  }
  return inTime;
}

async function processEntry(job: Job<QueuedJobData>, token: string | undefined, state: WorkerState, options: JobWorkerOptions): Promise<RunOutcome> {
  const name = job.name as EntryName;
  const row = await db().query.jobs.findFirst({ columns: { queueId: true, status: true }, where: eq(schema.jobs.id, job.data.jobId) });
  if (!row) throw new UnrecoverableError(`Job ${job.data.jobId} does not exist.`);
  if (row.queueId !== job.id) return "superseded";
  if (state.stopping) {
    // Taken just as the worker began to stop: hand it back untouched.
    await job.moveToWait(token);
    throw new WaitingError();
  }
  const control = newControl();
  state.active.set(job.id!, control);
  const ctx = {
    pool: state.pool,
    control,
    shuttingDown: () => state.stopping,
    stepsModule: options.stepsModule,
    onProgress: (percent: number) => job.updateProgress(percent),
  };
  let outcome: RunOutcome;
  try {
    outcome = name === "chunk" ? await runChunk(job.data.jobId, ctx) : name === "merge" ? await runMerge(job.data.jobId, ctx) : await runJob(job.data.jobId, ctx);
  } catch (caught) {
    const error = caught instanceof PermanentJobError ? new UnrecoverableError(caught.message) : caught instanceof Error ? caught : new Error(String(caught));
    recorded.add(error);
    await recordFailure(job, error, job.attemptsMade + 1).catch((e: unknown) => logger.error({ err: e }, "could not record a failed attempt"));
    throw error;
  } finally {
    state.active.delete(job.id!);
  }
  if (outcome === "stopped") {
    // Back to the queue without using up an attempt; the next run starts the job afresh.
    await job.moveToWait(token);
    throw new WaitingError();
  }
  return outcome;
}

/** After a failed attempt: close it, and mark the job (or chunk) failed when no retry is left. */
async function recordFailure(entry: Job<QueuedJobData>, error: Error, attemptsMade: number): Promise<void> {
  const { jobId } = entry.data;
  const d = db();
  const row = await d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
  if (!row || row.queueId !== entry.id) return;
  const now = new Date();
  const current = await d.query.attempts.findFirst({ where: and(eq(schema.attempts.jobId, jobId), eq(schema.attempts.status, "running")), orderBy: [desc(schema.attempts.number)] });
  if (current) await d.update(schema.attempts).set({ status: "failed", error: error.message, finishedAt: now }).where(eq(schema.attempts.id, current.id));
  const final = error instanceof UnrecoverableError || error.name === "UnrecoverableError" || attemptsMade >= (entry.opts.attempts ?? 1);
  const isChunk = entry.name === "chunk" && row.parentId;
  const log = isChunk ? jobLog(row.parentId!, null) : jobLog(jobId, current?.number ?? null);
  const who = isChunk ? `Chunk ${row.chunkIndex! + 1}: ` : "";
  if (row.status === "dismissed" || row.status === "successful") return;
  const notDismissed = and(eq(schema.jobs.id, jobId), sql`${schema.jobs.status} not in ('dismissed', 'successful')`);
  if (final) {
    await d.update(schema.jobs).set({ status: "failed", message: error.message, finishedAt: now, updatedAt: now }).where(notDismissed);
    await log.error(`${who}Failed: ${error.message}`);
  } else {
    const retry = attemptsMade + 1;
    await d.update(schema.jobs).set({ status: "accepted", message: `Attempt failed (${error.message}); retrying.`, updatedAt: now }).where(notDismissed);
    await log.warn(`${who}Attempt failed: ${error.message}. Try ${retry} of ${entry.opts.attempts ?? 1} follows after a delay.`);
  }
}

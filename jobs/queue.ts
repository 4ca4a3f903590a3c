import { Queue } from "bullmq";
import { createQueueConnectionForWeb } from "./redis";

/** The one queue of Lissom jobs. Job data carries ids only, never geometry. */
export const QUEUE_NAME = "lissom-jobs";

export interface QueuedJobData {
  jobId: string;
}

export class QueueUnavailableError extends Error {
  constructor(cause: unknown) {
    super("The job queue is not reachable right now, so the job was not submitted. Try again in a minute; operators can check /healthz.", { cause });
  }
}

let queue: Queue<QueuedJobData> | undefined;
let connection: ReturnType<typeof createQueueConnectionForWeb> | undefined;

export function jobQueue(): Queue<QueuedJobData> {
  connection ??= createQueueConnectionForWeb();
  queue ??= new Queue<QueuedJobData>(QUEUE_NAME, { connection });
  return queue;
}

export interface EnqueueOptions {
  priority?: number;
  attempts?: number;
}

/**
 * Puts a job row on the queue under `queueId`. Retries of infrastructure failures use
 * exponential backoff; BullMQ adds no jitter of its own here, so the worker spreads them.
 */
export async function enqueueJob(jobId: string, queueId: string, options: EnqueueOptions = {}): Promise<void> {
  try {
    await jobQueue().add(
      "run",
      { jobId },
      {
        jobId: queueId,
        priority: options.priority && options.priority > 0 ? options.priority : undefined,
        attempts: options.attempts ?? 3,
        backoff: { type: "exponential", delay: 2000 },
        removeOnComplete: { count: 1000 },
        removeOnFail: { count: 5000 },
      },
    );
  } catch (error) {
    throw new QueueUnavailableError(error);
  }
}

/** Takes a job off the queue if it has not started; a running one stops at its next feature. */
export async function removeQueued(queueId: string): Promise<void> {
  const job = await jobQueue().getJob(queueId);
  if (!job) return;
  const state = await job.getState();
  if (state === "waiting" || state === "delayed" || state === "prioritized" || state === "waiting-children") {
    await job.remove();
  }
}

/** True when the queue holds `queueId` in a state that will still run it. */
export async function isQueued(queueId: string): Promise<boolean> {
  const job = await jobQueue().getJob(queueId);
  if (!job) return false;
  const state = await job.getState();
  return state !== "completed" && state !== "failed" && state !== "unknown";
}

export async function queueHealth(): Promise<{ ok: boolean; detail: string }> {
  try {
    jobQueue();
    const pong = await Promise.race([
      connection!.ping(),
      new Promise<string>((_, reject) => setTimeout(() => reject(new Error("no answer within 2 s")), 2000)),
    ]);
    return { ok: pong === "PONG", detail: pong };
  } catch (error) {
    return { ok: false, detail: error instanceof Error ? error.message : String(error) };
  }
}

export async function closeQueue(): Promise<void> {
  await queue?.close();
  queue = undefined;
  connection = undefined;
}

import { Queue, Worker, type Job } from "bullmq";
import type { Redis } from "ioredis";
import { logger } from "../app/.server/logger.server";
import { QueueUnavailableError, queuePrefix } from "./queue";
import { createQueueConnectionForWeb, createRedisConnection } from "./redis";

/**
 * Schedule ticks: one BullMQ job scheduler per Lissom schedule, on a queue of its own.
 *
 * Why a queue of its own rather than the job queue: every entry of the job queue stands for a
 * job row that already exists (the row before the entry, DESIGN.md). A tick has no row yet; it
 * must first pick the latest version of its dataset at the moment it fires and only then
 * record a job. Keeping ticks apart keeps that contract of the job queue intact, and ticks are
 * light (a few database writes), so their worker runs in the web process in both modes; with
 * several web processes BullMQ still hands each tick to exactly one of them.
 *
 * The scheduler key is the schedule's id; BullMQ names each tick `repeat:<id>:<millis>`.
 */
export const SCHEDULE_QUEUE_NAME = "lissom-schedule-ticks";

export interface ScheduleTickData {
  scheduleId: string;
}

export interface SchedulerSpec {
  id: string;
  cron: string;
  timezone: string;
}

let queue: Queue<ScheduleTickData> | undefined;
let connection: Redis | undefined;

/** How long a change of a schedule waits for Redis before it is refused. */
const REDIS_TIMEOUT_MS = 5000;

export function scheduleQueue(): Queue<ScheduleTickData> {
  if (!queue) {
    connection = createQueueConnectionForWeb();
    let lastLogged = 0;
    connection.on("error", (error: Error) => {
      if (Date.now() - lastLogged > 60_000) {
        lastLogged = Date.now();
        logger.warn({ err: error }, "schedule queue: Redis is not reachable");
      }
    });
    queue = new Queue<ScheduleTickData>(SCHEDULE_QUEUE_NAME, { connection, prefix: queuePrefix() });
    queue.on("error", () => undefined); // the connection logs them
  }
  return queue;
}

/** Runs a queue command within REDIS_TIMEOUT_MS; failures become QueueUnavailableError. */
async function bounded<T>(what: () => Promise<T>): Promise<T> {
  let timer: NodeJS.Timeout | undefined;
  try {
    return await Promise.race([
      what(),
      new Promise<never>((_, reject) => {
        timer = setTimeout(() => reject(new Error(`Redis did not answer within ${REDIS_TIMEOUT_MS / 1000} s`)), REDIS_TIMEOUT_MS);
      }),
    ]);
  } catch (error) {
    throw error instanceof QueueUnavailableError ? error : new QueueUnavailableError(error);
  } finally {
    clearTimeout(timer);
  }
}

/** Creates or replaces the job scheduler of one schedule. */
export async function upsertScheduler(spec: SchedulerSpec): Promise<void> {
  await bounded(() => scheduleQueue().upsertJobScheduler(
    spec.id,
    { pattern: spec.cron, tz: spec.timezone },
    {
      name: "tick",
      data: { scheduleId: spec.id },
      opts: { attempts: 3, backoff: { type: "exponential", delay: 1000 }, removeOnComplete: { count: 200 }, removeOnFail: { count: 1000 } },
    },
  ));
}

/** Removes the job scheduler of one schedule (paused or deleted); nothing if it had none. */
export async function removeScheduler(id: string): Promise<void> {
  await bounded(() => scheduleQueue().removeJobScheduler(id));
}

/**
 * Makes the queue's schedulers exactly `active`: upserts each, removes any other (a schedule
 * deleted or paused while this process was away).
 */
export async function syncSchedulers(active: SchedulerSpec[]): Promise<{ upserted: number; removed: number }> {
  const keep = new Set(active.map((s) => s.id));
  let removed = 0;
  const existing = await bounded(() => scheduleQueue().getJobSchedulers(0, -1));
  for (const s of existing) {
    if (!keep.has(s.key)) {
      await removeScheduler(s.key);
      removed++;
    }
  }
  for (const spec of active) await upsertScheduler(spec);
  return { upserted: active.length, removed };
}

/** The time a tick was due: from its scheduler job id, else when it was created. */
export function tickTime(job: Job<ScheduleTickData>): Date {
  const millis = Number(String(job.id ?? "").split(":").pop());
  return new Date(Number.isFinite(millis) && millis > 0 ? millis : job.timestamp);
}

/** The worker that turns ticks into jobs through `onTick`; errors make BullMQ retry the tick. */
export function startScheduleWorker(onTick: (scheduleId: string, due: Date) => Promise<unknown>, onError: (error: Error) => void): Worker<ScheduleTickData> {
  const worker = new Worker<ScheduleTickData>(SCHEDULE_QUEUE_NAME, async (job) => onTick(job.data.scheduleId, tickTime(job)), {
    connection: createRedisConnection(),
    prefix: queuePrefix(),
    concurrency: 1,
  });
  worker.on("error", onError);
  return worker;
}

export async function closeScheduleQueue(): Promise<void> {
  await queue?.close();
  queue = undefined;
  connection = undefined;
}

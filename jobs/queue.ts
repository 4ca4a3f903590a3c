import { FlowProducer, Queue, type FlowJob, type JobsOptions } from "bullmq";
import type { Redis } from "ioredis";
import { logger } from "../app/.server/logger.server";
import { createQueueConnectionForWeb, isRedisReady } from "./redis";
import { BACKOFF_TYPE, DEFAULT_BACKOFF_MS, DEFAULT_MAX_ATTEMPTS } from "./runner/backoff";
import { runnerSettings } from "./runner/settings";

/**
 * The one queue of Lissom jobs. Job data carries ids (and a chunk's feature range) only,
 * never geometry. Three kinds of entry, by BullMQ job name:
 * - `run`: a job (`{ jobId }`); a large one cuts itself into chunks and adds a flow;
 * - `chunk`: one chunk of a fanned-out job (`{ jobId: chunk job id, parentJobId, start, end }`),
 *   a child in the flow;
 * - `merge`: the flow's parent (`{ jobId: the fanned-out job }`): runs once every chunk has
 *   finished, succeeded or not (`ignoreDependencyOnFailure`), and merges the chunk outputs.
 * The job row's `queueId` names the entry allowed to run it; any other entry for the same row
 * (an older retry, a duplicate made while Redis was away) finds it superseded and does nothing.
 */
export const QUEUE_NAME = "lissom-jobs";

export type QueuedJobData = { jobId: string; parentJobId?: string; start?: number; end?: number };
export type EntryName = "run" | "chunk" | "merge";

export class QueueUnavailableError extends Error {
  constructor(cause: unknown) {
    super("The job queue is not reachable right now, so the job was not submitted. Try again in a minute; operators can check /healthz.", { cause });
  }
}

/** How long a web request waits for Redis to take an entry before answering 503. */
const ADD_TIMEOUT_MS = 5000;

let queue: Queue<QueuedJobData> | undefined;
let flows: FlowProducer | undefined;
let connection: Redis | undefined;

export function queuePrefix(): string {
  return runnerSettings().LISSOM_QUEUE_PREFIX;
}

function webConnection(): Redis {
  if (!connection) {
    connection = createQueueConnectionForWeb();
    // ioredis reports every failed reconnection; /healthz tells operators, the log once a minute.
    let lastLogged = 0;
    connection.on("error", (error: Error) => {
      if (Date.now() - lastLogged > 60_000) {
        lastLogged = Date.now();
        logger.warn({ err: error }, "job queue: Redis is not reachable");
      }
    });
  }
  return connection;
}

export function jobQueue(): Queue<QueuedJobData> {
  if (!queue) {
    queue = new Queue<QueuedJobData>(QUEUE_NAME, { connection: webConnection(), prefix: queuePrefix() });
    // Without a listener an "error" event would end the process; the connection logs them.
    queue.on("error", () => undefined);
  }
  return queue;
}

function flowProducer(): FlowProducer {
  if (!flows) {
    flows = new FlowProducer({ connection: webConnection(), prefix: queuePrefix() });
    flows.on("error", () => undefined);
  }
  return flows;
}

export interface RetryPolicy {
  /** Tries in all, the first included. */
  attempts: number;
  /** Delay before the first retry; later ones double, with jitter (runner/backoff.ts). */
  backoffMs: number;
}

export const DEFAULT_RETRY_POLICY: RetryPolicy = { attempts: DEFAULT_MAX_ATTEMPTS, backoffMs: DEFAULT_BACKOFF_MS };

export function entryOptions(queueId: string, policy: RetryPolicy, priority?: number): JobsOptions {
  return {
    jobId: queueId,
    priority: priority && priority > 0 ? priority : undefined,
    attempts: Math.max(1, policy.attempts),
    backoff: { type: BACKOFF_TYPE, delay: Math.max(0, policy.backoffMs) },
    removeOnComplete: { count: 1000 },
    removeOnFail: { count: 5000 },
  };
}

/** How long a first command waits for a connection that is still being made. */
const FIRST_CONNECT_MS = 3000;

/**
 * True when the queue's Redis can take commands: at once when it is ready; a connection still
 * being made for the first time gets up to FIRST_CONNECT_MS; one that lost Redis ("reconnecting")
 * answers false at once.
 */
export async function queueReadySoon(): Promise<boolean> {
  jobQueue();
  const conn = webConnection();
  if (isRedisReady(conn)) return true;
  if (conn.status !== "connecting" && conn.status !== "connect" && conn.status !== "wait") return false;
  return new Promise<boolean>((resolveReady) => {
    const done = (ok: boolean) => {
      clearTimeout(timer);
      conn.off("ready", onReady);
      conn.off("reconnecting", onDown);
      conn.off("end", onDown);
      resolveReady(ok);
    };
    const onReady = () => done(true);
    const onDown = () => done(false);
    const timer = setTimeout(() => done(isRedisReady(conn)), FIRST_CONNECT_MS);
    conn.once("ready", onReady);
    conn.once("reconnecting", onDown);
    conn.once("end", onDown);
  });
}

/** Fails at once with QueueUnavailableError when Redis is away, else runs `add` within a bound. */
async function guarded<T>(add: () => Promise<T>): Promise<T> {
  if (!(await queueReadySoon())) throw new QueueUnavailableError(new Error(`Redis connection is ${webConnection().status}`));
  let timer: NodeJS.Timeout | undefined;
  try {
    return await Promise.race([
      add(),
      new Promise<never>((_, reject) => {
        timer = setTimeout(() => reject(new Error(`Redis did not answer within ${ADD_TIMEOUT_MS / 1000} s`)), ADD_TIMEOUT_MS);
      }),
    ]);
  } catch (error) {
    throw new QueueUnavailableError(error);
  } finally {
    clearTimeout(timer);
  }
}

/** Puts a job row on the queue under `queueId` (adding an id that is already there does nothing). */
export async function enqueueJob(jobId: string, queueId: string, options: { priority?: number; policy?: RetryPolicy } = {}): Promise<void> {
  await guarded(() => jobQueue().add("run", { jobId }, entryOptions(queueId, options.policy ?? DEFAULT_RETRY_POLICY, options.priority)));
}

export interface ChunkEntry {
  chunkId: string;
  queueId: string;
  start: number;
  end: number;
}

/**
 * The flow of a fanned-out job: a `merge` parent with one `chunk` child per chunk still to
 * run. With no chunk left, the merge entry alone.
 */
export async function enqueueFlow(parent: { jobId: string; queueId: string; priority?: number; policy: RetryPolicy }, chunks: ChunkEntry[]): Promise<void> {
  const base = entryOptions(parent.queueId, parent.policy, parent.priority);
  if (chunks.length === 0) {
    await guarded(() => jobQueue().add("merge", { jobId: parent.jobId }, base));
    return;
  }
  const flow: FlowJob = {
    name: "merge",
    queueName: QUEUE_NAME,
    data: { jobId: parent.jobId },
    opts: base,
    children: chunks.map((c) => ({
      name: "chunk",
      queueName: QUEUE_NAME,
      data: { jobId: c.chunkId, parentJobId: parent.jobId, start: c.start, end: c.end },
      // A failed chunk does not fail the flow: the merge entry still runs and records which
      // chunks failed, so an operator can retry those alone.
      opts: { ...entryOptions(c.queueId, parent.policy, parent.priority), ignoreDependencyOnFailure: true },
    })),
  };
  await guarded(() => flowProducer().add(flow));
}

/** Takes an entry off the queue if it has not started; a running one stops at its next feature. */
export async function removeQueued(queueId: string): Promise<void> {
  const job = await jobQueue().getJob(queueId);
  if (!job) return;
  const state = await job.getState();
  if (state === "waiting" || state === "delayed" || state === "prioritized") await job.remove();
}

/** The BullMQ state of an entry, "absent" when the queue does not hold it. */
export async function entryState(queueId: string): Promise<string> {
  const job = await jobQueue().getJob(queueId);
  if (!job) return "absent";
  const state = await job.getState();
  return state === "unknown" ? "absent" : state;
}

/** True when the queue holds `queueId` in a state that will still run it. */
export async function isQueued(queueId: string): Promise<boolean> {
  const state = await entryState(queueId);
  return state !== "completed" && state !== "failed" && state !== "absent";
}

/** Whether the queue's Redis can take entries now (no command is sent while it is away). */
export function queueReady(): boolean {
  jobQueue();
  return isRedisReady(webConnection());
}

export async function queueHealth(): Promise<{ ok: boolean; detail: string }> {
  try {
    jobQueue();
    const conn = webConnection();
    if (!(await queueReadySoon())) return { ok: false, detail: `Redis is not reachable (connection ${conn.status})` };
    let timer: NodeJS.Timeout | undefined;
    const pong = await Promise.race([
      conn.ping(),
      new Promise<string>((_, reject) => {
        timer = setTimeout(() => reject(new Error("Redis did not answer PING within 2 s")), 2000);
      }),
    ]).finally(() => clearTimeout(timer));
    return { ok: pong === "PONG", detail: pong === "PONG" ? "ok" : String(pong) };
  } catch (error) {
    return { ok: false, detail: error instanceof Error ? error.message : String(error) };
  }
}

export async function closeQueue(): Promise<void> {
  await flows?.close();
  await queue?.close();
  if (connection && connection.status !== "end") connection.disconnect();
  queue = undefined;
  flows = undefined;
  connection = undefined;
}

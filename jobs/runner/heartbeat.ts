import { hostname } from "node:os";
import { and, eq, isNotNull, isNull, lt, or } from "drizzle-orm";
import { db, schema } from "../../app/.server/db/client.server";
import { logger } from "../../app/.server/logger.server";

/** A worker is called stale after this many missed heartbeats. */
export const STALE_AFTER_BEATS = 3;
/** Rows of workers silent or stopped for longer than this are removed when a worker starts. */
const FORGET_AFTER_MS = 24 * 60 * 60 * 1000;

export interface Heartbeat {
  id: string;
  stop(): Promise<void>;
}

/**
 * Writes this worker's row in the `workers` table and refreshes `heartbeatAt` every
 * `intervalMs`, for /healthz and the board. `stop()` records a clean stop.
 */
export async function startHeartbeat(info: { mode: "embedded" | "redis"; concurrency: number; intervalMs: number }): Promise<Heartbeat> {
  const d = db();
  const id = crypto.randomUUID();
  const now = new Date();
  await d.delete(schema.workers).where(
    or(lt(schema.workers.heartbeatAt, new Date(now.getTime() - FORGET_AFTER_MS)), and(isNotNull(schema.workers.stoppedAt), lt(schema.workers.stoppedAt, new Date(now.getTime() - FORGET_AFTER_MS)))),
  );
  await d.insert(schema.workers).values({ id, hostname: hostname(), pid: process.pid, mode: info.mode, concurrency: info.concurrency, startedAt: now, heartbeatAt: now });
  let beating = false;
  const timer = setInterval(() => {
    if (beating) return;
    beating = true;
    d.update(schema.workers)
      .set({ heartbeatAt: new Date() })
      .where(eqId(id))
      .catch((error: unknown) => logger.warn({ err: error }, "could not write the worker heartbeat"))
      .finally(() => {
        beating = false;
      });
  }, info.intervalMs);
  timer.unref();
  return {
    id,
    async stop() {
      clearInterval(timer);
      await d.update(schema.workers).set({ stoppedAt: new Date(), heartbeatAt: new Date() }).where(eqId(id));
    },
  };
}

function eqId(id: string) {
  return and(eq(schema.workers.id, id), isNull(schema.workers.stoppedAt));
}

export interface WorkerStatus {
  id: string;
  hostname: string;
  pid: number;
  mode: "embedded" | "redis";
  concurrency: number;
  startedAt: string;
  lastBeatSecondsAgo: number;
  stale: boolean;
}

/** Workers that have not stopped cleanly, newest beat first, with whether each is stale. */
export async function workerStatuses(intervalMs: number, now = Date.now()): Promise<WorkerStatus[]> {
  const rows = await db().query.workers.findMany({ where: isNull(schema.workers.stoppedAt) });
  return rows
    .filter((r) => now - r.heartbeatAt.getTime() < FORGET_AFTER_MS)
    .sort((a, b) => b.heartbeatAt.getTime() - a.heartbeatAt.getTime())
    .map((r) => {
      const age = Math.max(0, now - r.heartbeatAt.getTime());
      return {
        id: r.id,
        hostname: r.hostname,
        pid: r.pid,
        mode: r.mode,
        concurrency: r.concurrency,
        startedAt: r.startedAt.toISOString(),
        lastBeatSecondsAgo: Math.round(age / 100) / 10,
        stale: age > STALE_AFTER_BEATS * intervalMs,
      };
    });
}

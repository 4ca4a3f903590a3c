import { sql } from "drizzle-orm";
import { queueHealth } from "../../jobs/queue";
import { workerStatuses } from "../../jobs/runner/heartbeat";
import { runnerSettings } from "../../jobs/runner/settings";
import { embeddedWorkerRunning } from "../.server/boot.server";
import { db } from "../.server/db/client.server";
import { env } from "../.server/env.server";

/**
 * Liveness and readiness for operators and load balancers; no sign-in, no secrets.
 *
 * - `database`: a `select 1`;
 * - `queue`: whether Redis (or the embedded one) answers PING, and the mode;
 * - `workers`: the worker processes' heartbeats (the `workers` table), each stale after three
 *   missed beats; ok when at least one worker beats (in embedded mode: the worker in this
 *   process runs).
 *
 * Answers 503 when the database or the queue is down: this process cannot take jobs. With no
 * live worker it still answers 200, `status: "degraded"`: jobs are accepted and wait, and a
 * load balancer should not take the web process out of rotation for a worker's fault.
 */
export async function loader() {
  let database = { ok: true, detail: "ok" };
  try {
    await db().run(sql`select 1`);
  } catch (error) {
    database = { ok: false, detail: error instanceof Error ? error.message : String(error) };
  }
  const queue = await queueHealth();
  const mode = env().REDIS_URL ? "redis" : "embedded";
  const intervalMs = runnerSettings().LISSOM_HEARTBEAT_MS;
  let list: Awaited<ReturnType<typeof workerStatuses>> = [];
  if (database.ok) {
    try {
      list = await workerStatuses(intervalMs);
    } catch {
      // reported through `database` when the database is the problem
    }
  }
  const live = list.filter((w) => !w.stale);
  const embeddedOk = mode === "embedded" && embeddedWorkerRunning();
  const workersOk = embeddedOk || live.length > 0;
  const workers = {
    ok: workersOk,
    detail: workersOk
      ? `${live.length} worker${live.length === 1 ? "" : "s"} beating${mode === "embedded" ? " (embedded)" : ""}`
      : mode === "embedded"
        ? "the embedded worker is not running"
        : "no worker process has written a heartbeat recently; start `npm run worker`",
    staleAfterSeconds: (3 * intervalMs) / 1000,
    list,
  };
  const down = !database.ok || !queue.ok;
  const status = down ? "down" : workersOk ? "ok" : "degraded";
  return Response.json({ status, database, queue: { ...queue, mode }, workers }, { status: down ? 503 : 200, headers: { "Cache-Control": "no-store" } });
}

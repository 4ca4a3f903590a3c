import { sql } from "drizzle-orm";
import { queueHealth } from "../../jobs/queue";
import { embeddedWorkerRunning } from "../.server/boot.server";
import { db } from "../.server/db/client.server";
import { env } from "../.server/env.server";

/** Liveness and readiness for operators and load balancers; no sign-in, no secrets. */
export async function loader() {
  let database = { ok: true, detail: "ok" };
  try {
    await db().run(sql`select 1`);
  } catch (error) {
    database = { ok: false, detail: error instanceof Error ? error.message : String(error) };
  }
  const queue = await queueHealth();
  const mode = env().REDIS_URL ? "redis" : "embedded";
  const worker = mode === "embedded" ? { ok: embeddedWorkerRunning(), detail: "embedded worker" } : { ok: true, detail: "separate worker processes" };
  const ok = database.ok && queue.ok && worker.ok;
  return Response.json(
    { status: ok ? "ok" : "degraded", database, queue: { ...queue, mode }, worker },
    { status: ok ? 200 : 503, headers: { "Cache-Control": "no-store" } },
  );
}

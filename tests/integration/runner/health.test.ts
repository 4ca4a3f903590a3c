/**
 * /healthz and the workers' heartbeats (issue 5, "Health and board"): the database, the queue,
 * and each worker process's last heartbeat, stale after three missed beats. Runs on the
 * embedded Redis, and on redis-server with REDIS_URL.
 */
import { hostname } from "node:os";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { backendName, closeApp, dropQueueKeys, privateEnv, waitFor, type RunnerEnv } from "./harness";

let env: RunnerEnv;

beforeAll(async () => {
  env = privateEnv("health", { LISSOM_HEARTBEAT_MS: "100" });
  const { migrateDatabase } = await import("../../../app/.server/db/client.server");
  await migrateDatabase();
});

afterAll(async () => {
  await closeApp();
  await dropQueueKeys(env.prefix);
});

type Health = {
  status: string;
  database: { ok: boolean };
  queue: { ok: boolean; mode: string };
  workers: { ok: boolean; staleAfterSeconds: number; list: { id: string; pid: number; hostname: string; stale: boolean; lastBeatSecondsAgo: number }[] };
};

async function health(): Promise<{ status: number; body: Health }> {
  const { loader } = await import("../../../app/routes/healthz");
  const res = await loader();
  expect(res.headers.get("Cache-Control")).toBe("no-store");
  return { status: res.status, body: (await res.json()) as Health };
}

describe(`/healthz with worker heartbeats, on ${backendName}`, () => {
  it("reports the database and queue up and no worker as degraded (200: jobs are still accepted)", async () => {
    const h = await health();
    expect(h.status).toBe(200);
    expect(h.body.database.ok).toBe(true);
    expect(h.body.queue.ok).toBe(true);
    expect(h.body.workers.ok).toBe(false);
    expect(h.body.status).toBe("degraded");
    expect(h.body.workers.staleAfterSeconds).toBeCloseTo(0.3);
  });

  it("lists a running worker as beating, a silent one as stale, and forgets one that stopped", async () => {
    const { db, schema } = await import("../../../app/.server/db/client.server");
    const silent = crypto.randomUUID();
    const hourAgo = new Date(Date.now() - 3600_000);
    await db().insert(schema.workers).values({ id: silent, hostname: "gone-host", pid: 4242, mode: "redis", concurrency: 2, startedAt: hourAgo, heartbeatAt: hourAgo });
    const { startJobWorker, shutdownJobWorker } = await import("../../../jobs/worker-core");
    const worker = startJobWorker({ concurrency: 1, heartbeatMs: 100 });
    await waitFor(async () => (await health()).body.workers.ok, 10_000, "a beating worker");
    // Beats go on: the row's time moves.
    const first = await db().query.workers.findFirst({ where: (w, { eq }) => eq(w.pid, process.pid) });
    await waitFor(async () => {
      const again = await db().query.workers.findFirst({ where: (w, { eq }) => eq(w.pid, process.pid) });
      return again!.heartbeatAt.getTime() > first!.heartbeatAt.getTime();
    }, 10_000, "a second heartbeat");
    const h = await health();
    expect(h.status).toBe(200);
    expect(h.body.status).toBe("ok");
    const mine = h.body.workers.list.find((w) => w.pid === process.pid)!;
    expect(mine).toMatchObject({ hostname: hostname(), stale: false });
    expect(h.body.workers.list.find((w) => w.id === silent)).toMatchObject({ stale: true, hostname: "gone-host" });

    expect(await shutdownJobWorker(worker, 10_000)).toBe(true);
    const after = await health();
    expect(after.body.workers.list.some((w) => w.pid === process.pid)).toBe(false);
    expect(after.body.workers.ok).toBe(false);
    const row = await db().query.workers.findFirst({ where: (w, { eq }) => eq(w.pid, process.pid) });
    expect(row!.stoppedAt).toBeInstanceOf(Date);
  });
});

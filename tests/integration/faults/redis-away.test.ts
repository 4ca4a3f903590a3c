/**
 * Fault: Redis unreachable at start, then going away (scaled mode). Issue 5: "the web process
 * stays up, /healthz reports the queue as down, submitting a job answers 503 with a clear
 * message, and nothing accepted is lost once Redis is back" (BullMQ guidance: a queue used from
 * web requests does not queue commands while Redis is away).
 *
 * The test runs its own redis-server (Debian package) on a free port, without persistence, so
 * stopping it loses every queue entry, as a crashed Redis without AOF does. Skipped (saying so)
 * where no redis-server binary is installed.
 */
import type { ChildProcess } from "node:child_process";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { bootTestApp, call, request } from "../routes/harness";
import { freePort, hasRedisServer, jobRecord, startRedisServer, stopProcess, waitFor, waitForJob, finished } from "../runner/harness";

if (!hasRedisServer) console.warn("tests/integration/faults/redis-away.test.ts skipped: no redis-server binary (apt-get install redis-server)");

describe.skipIf(!hasRedisServer)("Redis unreachable at start and going away (scaled mode)", () => {
  let port: number;
  let redis: ChildProcess | undefined;
  let cookies: Record<string, string>;
  let datasetId: string;
  const stops: (() => Promise<unknown>)[] = [];

  beforeAll(async () => {
    port = await freePort();
    process.env.REDIS_URL = `redis://127.0.0.1:${port}`;
    process.env.LISSOM_QUEUE_PREFIX = "lissom-away";
    process.env.LISSOM_RECONCILE_MS = "300";
    process.env.LISSOM_HEARTBEAT_MS = "200";
    process.env.LISSOM_FANOUT_VERTICES = "0";
    // Boots with nothing listening on the Redis port: the start must not wait for it.
    ({ cookies } = await bootTestApp());
    const { listDatasets } = await import("../../../app/.server/datasets.server");
    datasetId = (await listDatasets())[0]!.id;
  });

  afterAll(async () => {
    for (const stop of stops) await stop();
    const { stopReconciler } = await import("../../../app/.server/jobs.server");
    stopReconciler();
    const { closeQueue } = await import("../../../jobs/queue");
    await closeQueue();
    if (redis) await stopProcess(redis);
  });

  async function health() {
    const { loader } = await import("../../../app/routes/healthz");
    const res = await loader();
    return { status: res.status, body: (await res.json()) as { status: string; queue: { ok: boolean; detail: string }; workers: { ok: boolean } } };
  }

  async function execute() {
    const { action } = await import("../../../app/routes/api.process-execution");
    const req = request("/api/processes/fit/execution", {
      method: "POST",
      body: JSON.stringify({ inputs: { dataset: datasetId, tolerance: 5 } }),
      headers: { "Content-Type": "application/json" },
      cookie: cookies.engineer,
    });
    return call(action as never, { request: req, params: { processId: "fit" } });
  }

  async function jobCount() {
    const { listJobs } = await import("../../../app/.server/jobs.server");
    return (await listJobs({ limit: 1000 })).length;
  }

  it("starts without Redis: /healthz says the queue is down and submitting answers 503", async () => {
    const h = await health();
    expect(h.status).toBe(503);
    expect(h.body.status).toBe("down");
    expect(h.body.queue.ok).toBe(false);
    expect(h.body.queue.detail).toMatch(/not reachable/);
    const before = await jobCount();
    const res = await execute();
    expect(res.status).toBe(503);
    expect((res.body as { detail: string }).detail).toMatch(/queue is not reachable right now, so the job was not submitted/);
    expect(await jobCount()).toBe(before);
  });

  it("takes jobs once Redis is up, keeps them through a Redis crash, and runs them once it is back", async () => {
    redis = await startRedisServer(port);
    await waitFor(async () => (await health()).body.queue.ok, 20_000, "the queue to be reachable");
    expect((await health()).status).toBe(200);
    const accepted: string[] = [];
    for (let i = 0; i < 2; i++) {
      const res = await execute();
      expect(res.status).toBe(201);
      accepted.push((res.body as { jobID: string }).jobID);
    }

    // Redis goes away, taking the two queue entries with it (no persistence).
    await stopProcess(redis, "SIGKILL");
    redis = undefined;
    await waitFor(async () => !(await health()).body.queue.ok, 20_000, "the queue to be reported down");
    const h = await health();
    expect(h.status).toBe(503);
    const refused = await execute();
    expect(refused.status).toBe(503);
    for (const id of accepted) expect((await jobRecord(id)).job.status).toBe("accepted");

    // Redis is back, empty: the web process queues the accepted jobs again by itself.
    redis = await startRedisServer(port);
    const { entryState } = await import("../../../jobs/queue");
    await waitFor(async () => {
      try {
        for (const id of accepted) if ((await entryState((await jobRecord(id)).job.queueId!)) === "absent") return false;
        return true;
      } catch {
        return false; // still reconnecting
      }
    }, 30_000, "the accepted jobs to be queued again");

    // A worker (as `npm run worker` starts one) runs them, each once.
    const { startJobWorker, shutdownJobWorker } = await import("../../../jobs/worker-core");
    const worker = startJobWorker({ concurrency: 1 });
    stops.push(() => shutdownJobWorker(worker, 10_000));
    await waitFor(async () => (await health()).body.workers.ok, 20_000, "the worker's heartbeat");
    for (const id of accepted) await waitForJob(id, finished, 60_000, "finished");
    for (const id of accepted) {
      const record = await jobRecord(id);
      expect(record.job.status).toBe("successful");
      expect(record.attempts.map((a) => a.status)).toEqual(["successful"]);
      expect(record.log.filter((l) => l.message.startsWith("Finished:"))).toHaveLength(1);
      expect(record.log.some((l) => l.message === "Queued again: the queue had lost it.")).toBe(true);
    }
    expect((await health()).body.status).toBe("ok");
  }, 120_000);
});

/**
 * Faults of worker processes on a real Redis (issue 5): a worker killed with SIGKILL in the
 * middle of a job (the job is picked up again by another worker and finishes, with exactly one
 * output and one set of feature reports), and a worker sent SIGTERM (it stops after the current
 * feature, exits, and the job goes back to the queue without using up an attempt).
 *
 * The workers are real `npm run worker` processes (jobs/worker.ts) with a 1 s lock, so a dead
 * worker's job is taken over within about a second (BullMQ "Stalled jobs": a job whose lock
 * expired is moved back to wait by the next stalled check). Needs REDIS_URL; skipped otherwise.
 */
import { existsSync, readdirSync } from "node:fs";
import { afterAll, afterEach, beforeAll, describe, expect, it } from "vitest";
import { closeApp, dropQueueKeys, finished, jobRecord, privateEnv, realRedis, setEnv, spawnWorkerProcess, stopProcess, storeTownDataset, submit, waitFor, waitForJob, type RunnerEnv } from "../runner/harness";

if (!realRedis) console.warn("tests/integration/faults/worker-kill.test.ts skipped: set REDIS_URL to a redis-server to run the worker process faults");

describe.skipIf(!realRedis)("worker processes on redis-server", () => {
  let env: RunnerEnv;
  let dataset: Awaited<ReturnType<typeof storeTownDataset>>;
  const children: ReturnType<typeof spawnWorkerProcess>[] = [];
  const startWorker = () => {
    // The fan-out settings as this test set them last (the worker decides about cutting).
    const fanOut = { LISSOM_FANOUT_VERTICES: process.env.LISSOM_FANOUT_VERTICES ?? "0", LISSOM_CHUNK_VERTICES: process.env.LISSOM_CHUNK_VERTICES ?? "100000" };
    const w = spawnWorkerProcess({ ...env.env, ...fanOut, REDIS_URL: process.env.REDIS_URL!, LISSOM_LOCK_MS: "1000", WORKER_CONCURRENCY: "1" });
    children.push(w);
    return w;
  };

  beforeAll(async () => {
    env = privateEnv("worker-kill");
    const { migrateDatabase } = await import("../../../app/.server/db/client.server");
    await migrateDatabase();
    dataset = await storeTownDataset("kill town", 80_000, { seed: 21 });
  });

  // Whatever a test left running (after a failure) must not take the next test's jobs.
  afterEach(async () => {
    for (const c of children.splice(0)) await stopProcess(c.child);
  });

  afterAll(async () => {
    await closeApp();
    await dropQueueKeys(env.prefix);
  });

  async function expectOneResult(jobId: string) {
    const record = await jobRecord(jobId);
    expect(record.job.status).toBe("successful");
    expect(record.outputs).toHaveLength(1);
    const { storagePath } = await import("../../../app/.server/storage.server");
    // One attempt folder on disk: the killed attempt published nothing.
    expect(readdirSync(storagePath(`outputs/${jobId}`))).toHaveLength(1);
    expect(existsSync(storagePath(record.outputs[0]!.storagePath))).toBe(true);
    expect(record.reports).toHaveLength(dataset.features);
    expect(new Set(record.reports.map((r) => r.featureIndex)).size).toBe(dataset.features);
    expect(record.log.filter((l) => l.message.startsWith("Finished:"))).toHaveLength(1);
    return record;
  }

  it("SIGKILL in the middle of a job: another worker picks it up and finishes it once", async () => {
    setEnv({ LISSOM_FANOUT_VERTICES: "0" });
    const first = startWorker();
    const job = await submit(dataset.version.id);
    await waitForJob(job.id, (r) => r.featuresDone > 0 || finished(r), 60_000, "features done").catch((e: Error) => {
      throw new Error(`${e.message}\nworker output:\n${first.output()}`);
    });
    expect((await jobRecord(job.id)).job.status).toBe("running");
    await stopProcess(first.child, "SIGKILL");
    const second = startWorker();
    await waitForJob(job.id, finished, 120_000, "finished").catch((e: Error) => {
      throw new Error(`${e.message}\nworker output:\n${second.output()}`);
    });
    const record = await expectOneResult(job.id);
    expect(record.attempts.map((a) => a.status)).toEqual(["failed", "successful"]);
    expect(record.attempts[0]!.error).toMatch(/Abandoned/);
    await stopProcess(second.child, "SIGTERM");
  }, 150_000);

  it("SIGKILL while the chunks of a fanned-out job run: the job still ends with one merged result", async () => {
    setEnv({ LISSOM_FANOUT_VERTICES: "20000", LISSOM_CHUNK_VERTICES: "15000" });
    const first = startWorker();
    const job = await submit(dataset.version.id);
    await waitFor(async () => (await jobRecord(job.id)).chunks.some((c) => c.featuresDone > 0), 60_000, "a chunk under way").catch((e: Error) => {
      throw new Error(`${e.message}\nworker output:\n${first.output()}`);
    });
    await stopProcess(first.child, "SIGKILL");
    const second = startWorker();
    await waitForJob(job.id, finished, 120_000, "finished").catch((e: Error) => {
      throw new Error(`${e.message}\nworker output:\n${second.output()}`);
    });
    setEnv({ LISSOM_FANOUT_VERTICES: "0" });
    const record = await expectOneResult(job.id);
    expect(record.chunks.every((c) => c.status === "successful")).toBe(true);
    for (const c of record.chunks) {
      const chunk = await jobRecord(c.id);
      expect(chunk.reports).toHaveLength(0);
      // A killed chunk shows its abandoned attempt, then the one that finished.
      expect(chunk.attempts.at(-1)!.status).toBe("successful");
      expect(chunk.attempts.filter((a) => a.status === "successful")).toHaveLength(1);
      for (const a of chunk.attempts.slice(0, -1)) expect(a.error).toMatch(/Abandoned/);
    }
    expect(record.chunks.some((c) => c.featuresDone > 0)).toBe(true);
    await stopProcess(second.child, "SIGTERM");
  }, 150_000);

  it("SIGTERM: the worker stops after the current feature and exits; the job is finished by another", async () => {
    setEnv({ LISSOM_FANOUT_VERTICES: "0" });
    const first = startWorker();
    const job = await submit(dataset.version.id);
    await waitForJob(job.id, (r) => r.featuresDone > 0 || finished(r), 60_000, "features done");
    first.child.kill("SIGTERM");
    const code = await first.exited;
    expect(code, first.output()).toBe(0);
    const stopped = await jobRecord(job.id);
    expect(stopped.job.status).toBe("accepted");
    expect(stopped.attempts.map((a) => a.status)).toEqual(["failed"]);
    expect(stopped.attempts[0]!.error).toMatch(/shut down/);
    // The heartbeat row records the clean stop.
    const { db, schema } = await import("../../../app/.server/db/client.server");
    const { eq } = await import("drizzle-orm");
    const beat = await db().query.workers.findFirst({ where: eq(schema.workers.pid, first.child.pid!) });
    expect(beat?.stoppedAt).toBeInstanceOf(Date);
    const second = startWorker();
    await waitForJob(job.id, finished, 90_000, "finished");
    const record = await expectOneResult(job.id);
    expect(record.attempts.map((a) => a.status)).toEqual(["failed", "successful"]);
    await stopProcess(second.child, "SIGTERM");
  }, 150_000);
});

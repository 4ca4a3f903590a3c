/**
 * CPU off the event loop (issue 5, "Scaled"): fitting one long feature must never keep a worker
 * from renewing its BullMQ lock, or another worker's stalled check takes the job away and runs
 * it a second time (BullMQ "Stalled jobs": a job whose lock expired is moved back to wait).
 *
 * On a real Redis, with another process running the stalled check every 500 ms (as the other
 * workers of a deployment do; stall-watcher.ts): the same 60 000-vertex line fitted on the
 * worker's own thread (`inline`, the control) is reported stalled and run again, and fitted in
 * a runner thread it is not. Needs REDIS_URL; skipped otherwise (the
 * in-process version of the positive case runs on both queues in runner.test.ts).
 */
import { spawn, type ChildProcess } from "node:child_process";
import { QueueEvents, type Worker } from "bullmq";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeApp, dropQueueKeys, finished, jobRecord, privateEnv, realRedis, ROOT, stopProcess, storeTownDataset, submit, waitFor, waitForJob, type RunnerEnv } from "./harness";

if (!realRedis) console.warn("tests/integration/runner/lock.test.ts skipped: set REDIS_URL to a redis-server to check lock renewal against another worker process");

describe.skipIf(!realRedis)("lock renewal while a long feature is fitted, against another worker's stalled check", () => {
  let env: RunnerEnv;
  let events: QueueEvents;
  let watcher: ChildProcess;
  let dataset: Awaited<ReturnType<typeof storeTownDataset>>;
  let workerModule: typeof import("../../../jobs/worker-core");
  const stalled: string[] = [];

  beforeAll(async () => {
    env = privateEnv("lock");
    const { migrateDatabase } = await import("../../../app/.server/db/client.server");
    await migrateDatabase();
    dataset = await storeTownDataset("lock line", 60_000, { seed: 3, longFeature: true });
    workerModule = await import("../../../jobs/worker-core");
    const { QUEUE_NAME } = await import("../../../jobs/queue");
    const { createRedisConnection } = await import("../../../jobs/redis");
    events = new QueueEvents(QUEUE_NAME, { connection: createRedisConnection(), prefix: env.prefix });
    events.on("stalled", ({ jobId }) => stalled.push(jobId));
    await events.waitUntilReady();
    watcher = spawn(process.execPath, ["--import", "tsx", "tests/integration/runner/stall-watcher.ts"], { cwd: ROOT, env: { ...process.env, ...env.env }, stdio: ["ignore", "pipe", "inherit"] });
    let said = "";
    watcher.stdout!.on("data", (d) => (said += d));
    await waitFor(() => said.includes("watching"), 30_000, "the stall watcher to start");
  });

  afterAll(async () => {
    await stopProcess(watcher);
    await events?.close();
    await closeApp();
    await dropQueueKeys(env.prefix);
  });

  async function runWith(worker: Worker) {
    stalled.length = 0;
    const job = await submit(dataset.version.id);
    await waitForJob(job.id, finished, 60_000, "finished");
    // Both workers are done with it: let any stalled event arrive.
    await new Promise((r) => setTimeout(r, 1000));
    await workerModule.shutdownJobWorker(worker, 20_000);
    return { job: await jobRecord(job.id), queueId: job.queueId! };
  }

  it("control: fitted on the worker's own thread, the job's lock lapses and it is taken away", async () => {
    const worker = workerModule.startJobWorker({ concurrency: 1, lockDuration: 500, inline: true });
    const { job, queueId } = await runWith(worker);
    // The lock lapsed during the fit and the stalled check took the entry back: with another
    // free worker it would have run twice at once. (The job still ends once here: the entry
    // came back to this same, busy worker, which then found the job finished.)
    expect(stalled).toContain(queueId);
    expect(job.job.status).toBe("successful");
  }, 90_000);

  it("fitted in a runner thread, the lock is renewed and the job runs once", async () => {
    const worker = workerModule.startJobWorker({ concurrency: 1, lockDuration: 500 });
    const { job, queueId } = await runWith(worker);
    expect(stalled).not.toContain(queueId);
    expect(job.job.status).toBe("successful");
    expect(job.reports).toHaveLength(1);
    expect(job.attempts.map((a) => a.status)).toEqual(["successful"]);
  }, 90_000);
});

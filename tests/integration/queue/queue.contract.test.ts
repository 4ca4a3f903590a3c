/**
 * The queue contract Lissom relies on, run unchanged on the embedded in-memory Redis and (with
 * REDIS_URL) on a real redis-server: BullMQ 6.7.0 behaviour as documented at docs.bullmq.io
 * (guide sections Jobs, Workers, Retrying failing jobs, Flows, Job Schedulers, Events,
 * Stalled jobs, Removing jobs) and in its API reference.
 */
import { UnrecoverableError, type Job } from "bullmq";
import { pack } from "msgpackr";
import { beforeEach, describe, expect, it } from "vitest";
import { backend, deferred, Harness, useHarness, waitFor } from "./harness";

describe(`queue contract on ${backend === "embedded" ? "the embedded in-memory Redis" : "redis-server (REDIS_URL)"}`, () => {
  const harness = useHarness();
  let h: Harness;
  beforeEach(() => {
    h = harness();
  });

  it("adds, processes and completes a job with its return value", async () => {
    const name = h.name("complete");
    const events = await h.events(name);
    const completed = new Promise<{ jobId: string; returnvalue: unknown }>((resolve) => events.once("completed", resolve));
    const queue = h.queue(name);
    h.worker(name, async (job) => ({ features: job.data.features * 2, label: `fitted ${job.name}` }));
    const job = await queue.add("fit", { features: 21 });
    const event = await completed;
    expect(event.jobId).toBe(job.id);
    expect(event.returnvalue).toEqual({ features: 42, label: "fitted fit" });
    const stored = await queue.getJob(job.id!);
    expect(stored?.returnvalue).toEqual({ features: 42, label: "fitted fit" });
    expect(await stored?.getState()).toBe("completed");
    expect(stored?.finishedOn).toBeGreaterThanOrEqual(stored!.processedOn!);
    expect(await queue.getJobCounts("completed", "wait", "active")).toEqual({ completed: 1, wait: 0, active: 0 });
  });

  it("reports progress as a number and as an object", async () => {
    const name = h.name("progress");
    const events = await h.events(name);
    const seen: unknown[] = [];
    const twoUpdates = new Promise<void>((resolve) =>
      events.on("progress", ({ data }) => {
        seen.push(data);
        if (seen.length === 2) resolve();
      }),
    );
    const queue = h.queue(name);
    h.worker(name, async (job) => {
      await job.updateProgress(42);
      await job.updateProgress({ step: "fit", done: 3, of: 7 });
      return "ok";
    });
    const job = await queue.add("fit", {});
    await twoUpdates;
    expect(seen).toEqual([42, { step: "fit", done: 3, of: 7 }]);
    await waitFor(async () => (await job.getState()) === "completed", 5000, "completion");
    expect((await queue.getJob(job.id!))?.progress).toEqual({ step: "fit", done: 3, of: 7 });
  });

  it("stores the error message and stack of a failed job", async () => {
    const name = h.name("fail");
    const events = await h.events(name);
    const failed = new Promise<{ jobId: string; failedReason: string }>((resolve) => events.once("failed", resolve));
    const queue = h.queue(name);
    h.worker(name, async () => {
      throw new Error("tolerance must be positive");
    });
    const job = await queue.add("fit", { tolerance: -1 });
    const event = await failed;
    expect(event).toMatchObject({ jobId: job.id, failedReason: "tolerance must be positive" });
    const stored = await queue.getJob(job.id!);
    expect(await stored?.getState()).toBe("failed");
    expect(stored?.failedReason).toBe("tolerance must be positive");
    expect(stored?.stacktrace).toHaveLength(1);
    expect(stored?.stacktrace?.[0]).toMatch(/^Error: tolerance must be positive\n\s+at /);
  });

  it("retries with exponential backoff and succeeds on the third attempt", async () => {
    const name = h.name("retry");
    const queue = h.queue(name);
    const calls: { attemptsMade: number; at: number }[] = [];
    h.worker(name, async (job) => {
      calls.push({ attemptsMade: job.attemptsMade, at: Date.now() });
      if (calls.length < 3) throw new Error(`transient ${calls.length}`);
      return "fitted";
    });
    // Exponential backoff: delay * 2^(attemptsMade - 1), i.e. 150 ms then 300 ms.
    const job = await queue.add("fit", {}, { attempts: 3, backoff: { type: "exponential", delay: 150 } });
    await waitFor(async () => (await job.getState()) === "completed", 8000, "completion after retries");
    expect(calls.map((c) => c.attemptsMade)).toEqual([0, 1, 2]);
    expect(calls[1].at - calls[0].at).toBeGreaterThanOrEqual(150);
    expect(calls[2].at - calls[1].at).toBeGreaterThanOrEqual(300);
    const stored = await queue.getJob(job.id!);
    expect(stored?.returnvalue).toBe("fitted");
    expect(stored?.attemptsMade).toBe(3);
    expect(stored?.stacktrace).toHaveLength(2);
  });

  it("does not retry an UnrecoverableError", async () => {
    const name = h.name("unrecoverable");
    const queue = h.queue(name);
    let calls = 0;
    h.worker(name, async () => {
      calls++;
      throw new UnrecoverableError("input has no line features");
    });
    const job = await queue.add("fit", {}, { attempts: 3, backoff: { type: "fixed", delay: 50 } });
    await waitFor(async () => (await job.getState()) === "failed", 5000, "failure");
    await new Promise((r) => setTimeout(r, 200));
    expect(calls).toBe(1);
    const stored = await queue.getJob(job.id!);
    expect(stored?.failedReason).toBe("input has no line features");
    expect(stored?.attemptsMade).toBe(1);
  });

  it("holds a delayed job back until its delay has passed", async () => {
    const name = h.name("delayed");
    const queue = h.queue(name);
    const processedAt = deferred<number>();
    h.worker(name, async () => {
      processedAt.resolve(Date.now());
    });
    const job = await queue.add("fit", {}, { delay: 400 });
    expect(await job.getState()).toBe("delayed");
    const at = await processedAt.promise;
    expect(at - job.timestamp).toBeGreaterThanOrEqual(400);
    expect(at - job.timestamp).toBeLessThan(3000);
  });

  it("processes jobs in priority order (1 is the highest priority)", async () => {
    const name = h.name("priority");
    const queue = h.queue(name);
    for (const priority of [5, 1, 3, 2, 4]) await queue.add(`p${priority}`, { priority }, { priority });
    expect(await queue.getJobCounts("prioritized")).toEqual({ prioritized: 5 });
    const order: number[] = [];
    const worker = h.worker(name, async (job) => {
      order.push(job.data.priority);
    }, { autorun: false, concurrency: 1 });
    void worker.run();
    await waitFor(() => order.length === 5, 5000, "five jobs");
    expect(order).toEqual([1, 2, 3, 4, 5]);
  });

  it("runs a flow: the parent sees its children's return values", async () => {
    const parentQueue = h.name("merge");
    const childQueue = h.name("chunk");
    h.worker(childQueue, async (job) => ({ chunk: job.data.chunk, features: job.data.chunk * 10 }));
    const parentSaw = deferred<Record<string, unknown>>();
    h.worker(parentQueue, async (job) => {
      const values = await job.getChildrenValues();
      parentSaw.resolve(values);
      return Object.keys(values).length;
    });
    const tree = await h.flow().add({
      name: "merge-chunks",
      queueName: parentQueue,
      data: { dataset: "mill-brook" },
      children: [1, 2, 3].map((chunk) => ({ name: "fit-chunk", queueName: childQueue, data: { chunk } })),
    });
    expect(await tree.job.getState()).toBe("waiting-children");
    const values = await parentSaw.promise;
    expect(Object.values(values).sort((a, b) => (a as { chunk: number }).chunk - (b as { chunk: number }).chunk)).toEqual([
      { chunk: 1, features: 10 },
      { chunk: 2, features: 20 },
      { chunk: 3, features: 30 },
    ]);
    for (const child of tree.children ?? []) {
      expect(Object.keys(values)).toContain(`${h.prefix}:${childQueue}:${child.job.id}`);
    }
    await waitFor(async () => (await tree.job.getState()) === "completed", 5000, "parent completion");
  });

  it("fires an `every` job scheduler repeatedly with scheduler job ids", async () => {
    const name = h.name("every");
    const queue = h.queue(name);
    const runs: Job[] = [];
    h.worker(name, async (job) => {
      runs.push(job);
    });
    await queue.upsertJobScheduler("resample-every", { every: 250 }, { name: "resample", data: { source: "gauges" } });
    await waitFor(() => runs.length >= 2, 5000, "two runs");
    await queue.removeJobScheduler("resample-every");
    for (const job of runs.slice(0, 2)) {
      expect(job.name).toBe("resample");
      expect(job.data).toEqual({ source: "gauges" });
      // Scheduler job ids are "repeat:<scheduler id>:<millis>" with an integer timestamp.
      expect(job.id).toMatch(/^repeat:resample-every:\d+$/);
    }
    const t0 = Number(runs[0].id!.split(":")[2]);
    const t1 = Number(runs[1].id!.split(":")[2]);
    expect(t1 - t0).toBe(250);
  });

  it("fires a cron-pattern job scheduler with a time zone at least twice", async () => {
    const name = h.name("cron");
    const queue = h.queue(name);
    const runs: Job[] = [];
    h.worker(name, async (job) => {
      runs.push(job);
    });
    // Six-field cron (with seconds): every second, evaluated in Europe/Berlin.
    await queue.upsertJobScheduler("nightly-like", { pattern: "* * * * * *", tz: "Europe/Berlin" }, { name: "publish", data: {} });
    const scheduler = await queue.getJobScheduler("nightly-like");
    expect(scheduler).toMatchObject({ key: "nightly-like", pattern: "* * * * * *", tz: "Europe/Berlin" });
    await waitFor(() => runs.length >= 2, 5000, "two cron runs");
    await queue.removeJobScheduler("nightly-like");
    const t0 = Number(runs[0].id!.split(":")[2]);
    const t1 = Number(runs[1].id!.split(":")[2]);
    expect(t0 % 1000).toBe(0);
    expect(t1 - t0).toBe(1000);
  });

  it("dismisses a waiting job: remove() deletes it; moveToFailed() needs an active job", async () => {
    const name = h.name("dismiss-waiting");
    const queue = h.queue(name);
    const job = await queue.add("fit", { n: 1 });
    expect(await job.getState()).toBe("waiting");
    await expect(job.moveToFailed(new Error("dismissed"), "0")).rejects.toThrow(/is not in the active state/);
    await job.remove();
    expect(await queue.getJob(job.id!)).toBeUndefined();
    expect(await queue.getJobCounts("wait")).toEqual({ wait: 0 });
  });

  it("dismisses an active job by moving it to failed with the worker's token", async () => {
    const name = h.name("dismiss-active");
    const queue = h.queue(name);
    const started = deferred<string>();
    const release = deferred();
    h.worker(
      name,
      async (_job, token) => {
        started.resolve(token!);
        await release.promise;
        return "too late";
      },
      {},
      false,
    );
    const job = await queue.add("fit", {});
    const token = await started.promise;
    expect(await job.getState()).toBe("active");
    await expect(job.remove()).rejects.toThrow(/locked/);
    const active = (await queue.getJob(job.id!))!;
    await active.moveToFailed(new Error("dismissed by operator"), token);
    expect(await job.getState()).toBe("failed");
    expect((await queue.getJob(job.id!))?.failedReason).toBe("dismissed by operator");
    release.resolve();
    await new Promise((r) => setTimeout(r, 100));
    // The worker's own completion is refused: the job stays dismissed.
    expect(await job.getState()).toBe("failed");
  });

  it("cancels an active job through the worker's abort signal", async () => {
    const name = h.name("cancel-active");
    const queue = h.queue(name);
    const started = deferred();
    const worker = h.worker(name, async (_job, _token, signal) => {
      started.resolve();
      await new Promise<void>((_, reject) => signal?.addEventListener("abort", () => reject(new Error(String(signal.reason)))));
    });
    const job = await queue.add("fit", {});
    await started.promise;
    expect(worker.cancelJob(job.id!, "dismissed")).toBe(true);
    await waitFor(async () => (await job.getState()) === "failed", 5000, "failed state");
    expect((await queue.getJob(job.id!))?.failedReason).toBe("dismissed");
  });

  it("recovers a stalled job: another worker completes it after the lock expired", async () => {
    const name = h.name("stalled");
    const queue = h.queue(name);
    const stuck = deferred();
    const startedOnA = deferred();
    // Worker A takes the job and then neither renews its lock nor finishes (a hung process).
    h.worker(
      name,
      async () => {
        startedOnA.resolve();
        await stuck.promise;
      },
      { skipLockRenewal: true, skipStalledCheck: true, lockDuration: 500 },
      false,
    );
    const job = await queue.add("fit", { dataset: "coastline" });
    await startedOnA.promise;
    const stalledIds: string[] = [];
    const completedOnB = deferred<string>();
    const workerB = h.worker(
      name,
      async () => {
        completedOnB.resolve("B");
        return "recovered";
      },
      { stalledInterval: 300, lockDuration: 500 },
    );
    workerB.on("stalled", (jobId) => stalledIds.push(jobId));
    expect(await completedOnB.promise).toBe("B");
    await waitFor(async () => (await job.getState()) === "completed", 5000, "completion on B");
    expect(stalledIds).toContain(job.id);
    expect((await queue.getJob(job.id!))?.returnvalue).toBe("recovered");
    stuck.resolve();
  });

  it("keeps job data binary-safe: unicode, large strings, invalid-UTF-8 msgpack, big numbers", async () => {
    const name = h.name("binary");
    const queue = h.queue(name);
    const now = Date.now();
    const data = {
      title: "Rivière Ølstrøm — 河川 🌊",
      lone: "half a pair: \ud83c",
      big: "Ω".repeat(300_000),
      timestamp: now,
      large: 2 ** 40 + 1,
      negative: -(2 ** 45) - 3,
      maxSafe: Number.MAX_SAFE_INTEGER,
      tolerance: 0.1,
      nested: { ids: [1, 2, 3], flag: false, none: null },
    };
    // A 65-character name packs as msgpack str8 (d9 41 ...): bytes that are not valid UTF-8,
    // so a fake that treats the packed script arguments as text would corrupt them.
    const jobName = "fit-" + "é".repeat(30) + "x".repeat(31);
    expect(() => new TextDecoder("utf-8", { fatal: true }).decode(pack([jobName]))).toThrow();
    const seen = deferred<{ name: string; data: unknown; timestamp: number }>();
    h.worker(name, async (job) => {
      seen.resolve({ name: job.name, data: job.data, timestamp: job.timestamp });
      return { echoed: job.data.title, at: job.data.timestamp };
    });
    const job = await queue.add(jobName, data, { jobId: `dataset-${now}-ümlaut`, timestamp: now });
    expect(job.id).toBe(`dataset-${now}-ümlaut`);
    const inProcessor = await seen.promise;
    expect(inProcessor).toEqual({ name: jobName, data, timestamp: now });
    await waitFor(async () => (await job.getState()) === "completed", 5000, "completion");
    const stored = (await queue.getJob(job.id!))!;
    expect(stored.name).toBe(jobName);
    expect(stored.data).toEqual(data);
    expect(stored.timestamp).toBe(now);
    expect(stored.returnvalue).toEqual({ echoed: data.title, at: now });
  });

  it("emits added, active, progress, completed and failed events in order per job", async () => {
    const name = h.name("events");
    const events = await h.events(name);
    const log: string[] = [];
    events.on("added", ({ jobId }) => log.push(`added ${jobId}`));
    events.on("active", ({ jobId }) => log.push(`active ${jobId}`));
    events.on("progress", ({ jobId, data }) => log.push(`progress ${jobId} ${JSON.stringify(data)}`));
    events.on("completed", ({ jobId }) => log.push(`completed ${jobId}`));
    events.on("failed", ({ jobId, failedReason }) => log.push(`failed ${jobId} ${failedReason}`));
    const queue = h.queue(name);
    const ok = await queue.add("ok", {});
    const bad = await queue.add("bad", {});
    h.worker(
      name,
      async (job) => {
        if (job.name === "bad") throw new Error("no features");
        await job.updateProgress(100);
        return 1;
      },
      { concurrency: 1 },
    );
    await waitFor(() => log.some((l) => l.startsWith("failed")) && log.some((l) => l.startsWith("completed")), 5000, "both outcomes");
    const okLog = log.filter((l) => l.split(" ")[1] === ok.id);
    const badLog = log.filter((l) => l.split(" ")[1] === bad.id);
    expect(okLog).toEqual([`added ${ok.id}`, `active ${ok.id}`, `progress ${ok.id} 100`, `completed ${ok.id}`]);
    expect(badLog).toEqual([`added ${bad.id}`, `active ${bad.id}`, `failed ${bad.id} no features`]);
  });
});

/**
 * The operator side of the queue contract (watching, retrying, pausing, cleaning), run on the
 * embedded in-memory Redis and (with REDIS_URL) on redis-server. Expected behaviour: BullMQ
 * 6.7.0 documentation (guide sections Queues, Jobs, Workers, Rate limiting, Deduplication) and
 * API reference.
 */
import { beforeEach, describe, expect, it } from "vitest";
import { backend, deferred, Harness, useHarness, waitFor } from "./harness";

describe(`queue administration on ${backend === "embedded" ? "the embedded in-memory Redis" : "redis-server (REDIS_URL)"}`, () => {
  const harness = useHarness();
  let h: Harness;
  beforeEach(() => {
    h = harness();
  });

  it("lists jobs by state, newest first, a page at a time", async () => {
    const name = h.name("list");
    const queue = h.queue(name);
    const added = await queue.addBulk(Array.from({ length: 7 }, (_, i) => ({ name: "fit", data: { i } })));
    expect(added.map((j) => j.data.i)).toEqual([0, 1, 2, 3, 4, 5, 6]);
    expect(await queue.getJobCounts("waiting")).toEqual({ waiting: 7 });
    expect(await queue.count()).toBe(7);
    const page1 = await queue.getJobs(["waiting"], 0, 2, false);
    const page2 = await queue.getJobs(["waiting"], 3, 5, false);
    expect(page1.map((j) => j.data.i)).toEqual([6, 5, 4]);
    expect(page2.map((j) => j.data.i)).toEqual([3, 2, 1]);
    const oldestFirst = await queue.getJobs(["waiting"], 0, 1, true);
    expect(oldestFirst.map((j) => j.data.i)).toEqual([0, 1]);
    expect(await queue.getWaitingCount()).toBe(7);
  });

  it("pauses and resumes a queue", async () => {
    const name = h.name("pause");
    const queue = h.queue(name);
    await queue.pause();
    expect(await queue.isPaused()).toBe(true);
    const processed: number[] = [];
    h.worker(name, async (job) => {
      processed.push(job.data.i);
    });
    await queue.add("fit", { i: 1 });
    await new Promise((r) => setTimeout(r, 300));
    expect(processed).toEqual([]);
    // Jobs of a paused queue wait in the wait list; the queue's meta says it is paused.
    expect(await queue.getJobCounts("waiting")).toEqual({ waiting: 1 });
    await queue.resume();
    await waitFor(() => processed.length === 1, 5000, "processing after resume");
    expect(await queue.isPaused()).toBe(false);
  });

  it("retries a failed job on demand and keeps the attempt history", async () => {
    const name = h.name("retry-failed");
    const queue = h.queue(name);
    let fail = true;
    h.worker(name, async () => {
      if (fail) throw new Error("storage offline");
      return "ok";
    });
    const job = await queue.add("fit", {});
    await waitFor(async () => (await job.getState()) === "failed", 5000, "failure");
    fail = false;
    const failed = (await queue.getJob(job.id!))!;
    await failed.retry();
    await waitFor(async () => (await job.getState()) === "completed", 5000, "completion after retry");
    const stored = (await queue.getJob(job.id!))!;
    expect(stored.returnvalue).toBe("ok");
    expect(stored.failedReason).toBeUndefined();
  });

  it("keeps job logs and updates job data", async () => {
    const name = h.name("logs");
    const queue = h.queue(name);
    const job = await queue.add("fit", { tolerance: 0.5 });
    await job.log("read 120 features");
    await job.log("fitted 118, skipped 2");
    expect(await queue.getJobLogs(job.id!)).toEqual({ logs: ["read 120 features", "fitted 118, skipped 2"], count: 2 });
    await job.updateData({ tolerance: 0.25 });
    expect((await queue.getJob(job.id!))?.data).toEqual({ tolerance: 0.25 });
  });

  it("changes a waiting job's priority and promotes a delayed job", async () => {
    const name = h.name("change");
    const queue = h.queue(name);
    const low = await queue.add("low", {}, { priority: 10 });
    await queue.add("mid", {}, { priority: 5 });
    await low.changePriority({ priority: 1 });
    const delayed = await queue.add("later", {}, { delay: 60_000 });
    expect(await delayed.getState()).toBe("delayed");
    await delayed.promote();
    expect(await delayed.getState()).toBe("waiting");
    const order: string[] = [];
    h.worker(name, async (job) => {
      order.push(job.name);
    }, { concurrency: 1 });
    await waitFor(() => order.length === 3, 5000, "three jobs");
    // A promoted job joins the wait list, which is served before prioritized jobs.
    expect(order).toEqual(["later", "low", "mid"]);
  });

  it("removes finished jobs beyond removeOnComplete and cleans and drains queues", async () => {
    const name = h.name("clean");
    const queue = h.queue(name);
    h.worker(name, async () => "done", { concurrency: 1 });
    await queue.addBulk(Array.from({ length: 5 }, (_, i) => ({ name: "fit", data: { i }, opts: { removeOnComplete: 2 } })));
    await waitFor(async () => (await queue.getJobCounts("completed")).completed === 2 && (await queue.getJobCounts("wait")).wait === 0, 5000, "trimmed completed set");
    await h.closeAll();
    const queue2 = h.queue(name);
    const removed = await queue2.clean(0, 10, "completed");
    expect(removed).toHaveLength(2);
    expect(await queue2.getJobCounts("completed")).toEqual({ completed: 0 });
    await queue2.addBulk([{ name: "a", data: {} }, { name: "b", data: {}, opts: { delay: 60_000 } }]);
    await queue2.drain(true);
    expect(await queue2.getJobCounts("wait", "delayed")).toEqual({ wait: 0, delayed: 0 });
  });

  it("obliterates a queue with all its keys", async () => {
    const name = h.name("obliterate");
    const queue = h.queue(name);
    await queue.addBulk(Array.from({ length: 3 }, () => ({ name: "fit", data: {} })));
    await queue.obliterate({ force: true });
    const keys = await h.connection.keys(`${h.prefix}:${name}:*`);
    expect(keys).toEqual([]);
  });

  it("deduplicates jobs with the same deduplication id", async () => {
    const name = h.name("dedup");
    const queue = h.queue(name);
    const first = await queue.add("fit", { v: 1 }, { deduplication: { id: "dataset-7" } });
    const second = await queue.add("fit", { v: 2 }, { deduplication: { id: "dataset-7" } });
    expect(second.id).toBe(first.id);
    expect(await queue.getJobCounts("waiting")).toEqual({ waiting: 1 });
    expect(await queue.getDeduplicationJobId("dataset-7")).toBe(first.id);
  });

  it("limits the processing rate", async () => {
    const name = h.name("rate");
    const queue = h.queue(name);
    const times: number[] = [];
    h.worker(name, async () => {
      times.push(Date.now());
    }, { limiter: { max: 2, duration: 400 }, concurrency: 4 });
    await queue.addBulk(Array.from({ length: 4 }, () => ({ name: "fit", data: {} })));
    await waitFor(() => times.length === 4, 8000, "four jobs");
    // At most 2 jobs start within any 400 ms window: the third waits for the next window.
    expect(times[2] - times[0]).toBeGreaterThanOrEqual(350);
  });

  it("names worker connections so operators can list the workers of a queue", async () => {
    const name = h.name("workers");
    const queue = h.queue(name);
    const w = h.worker(name, async () => undefined, { name: "fitter-1" });
    await w.waitUntilReady();
    await waitFor(async () => (await queue.getWorkers()).length === 1, 5000, "one worker");
    const workers = await queue.getWorkers();
    expect(workers[0]).toMatchObject({ name, rawname: `${h.prefix}:${Buffer.from(name).toString("base64")}:w:fitter-1` });
    expect(await queue.getWorkersCount()).toBe(1);
  });

  it("waits for a job to finish through QueueEvents", async () => {
    const name = h.name("wait-finished");
    const events = await h.events(name);
    const queue = h.queue(name);
    const go = deferred();
    h.worker(name, async (job) => {
      await go.promise;
      return job.data.n + 1;
    });
    const job = await queue.add("fit", { n: 41 });
    const finished = job.waitUntilFinished(events, 5000);
    go.resolve();
    expect(await finished).toBe(42);
  });
});

/**
 * A failed chunk is retried alone (issue 5, "Fan-out"): a chunk whose runner thread crashes on
 * every try (as if it ran out of memory) uses up its attempts and fails; the merge then marks
 * the job failed, naming the chunk; an operator's "Retry failed chunks" on the job page runs
 * that chunk again, and only it, and the job is merged into the same files a single run makes.
 * Runs on the embedded Redis, and on redis-server with REDIS_URL.
 */
import { readFileSync, rmSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import type { Worker } from "bullmq";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { call, request } from "../routes/harness";
import { backendName, closeApp, comparable, dropQueueKeys, finished, jobRecord, privateEnv, setEnv, storeDefinition, storeTownDataset, submit, waitForJob, type RunnerEnv } from "./harness";

let env: RunnerEnv;
let worker: Worker;
let workerModule: typeof import("../../../jobs/worker-core");
let faults: string;
let operatorCookie: string;

beforeAll(async () => {
  env = privateEnv("chunk-retry", { LISSOM_DEMO: "1" });
  faults = join(env.dir, "faults.json");
  setEnv({ LISSOM_TEST_FAULTS: faults });
  const { migrateDatabase } = await import("../../../app/.server/db/client.server");
  await migrateDatabase();
  const { seedDemo } = await import("../../../app/.server/seed.server");
  await seedDemo();
  const { auth } = await import("../../../app/.server/auth.server");
  const res = await auth().api.signInEmail({ body: { email: "operator@example.com", password: "lissom-demo" }, asResponse: true });
  operatorCookie = res.headers.getSetCookie().map((c) => c.split(";")[0]).join("; ");
  workerModule = await import("../../../jobs/worker-core");
  worker = workerModule.startJobWorker({ concurrency: 2, stepsModule: join(import.meta.dirname, "../faults/faulty-steps.ts") });
});

afterAll(async () => {
  await workerModule?.shutdownJobWorker(worker, 10_000);
  await closeApp();
  await dropQueueKeys(env.prefix);
});

async function geojsonOf(record: Awaited<ReturnType<typeof jobRecord>>) {
  const { storagePath } = await import("../../../app/.server/storage.server");
  return comparable(readFileSync(storagePath(record.outputs[0]!.storagePath), "utf8"), record.job.id);
}

describe(`retrying only the failed chunk of a fanned-out job, on ${backendName}`, () => {
  it("fails the job naming the chunk, then retries that chunk alone and merges the same output", async () => {
    const dataset = await storeTownDataset("chunky town", 12_000, { seed: 9 });
    const definition = await storeDefinition("two tries", [], { maxAttempts: 2, backoffMs: 100 });
    setEnv({ LISSOM_FANOUT_VERTICES: "0" });
    const reference = await submit(dataset.version.id, { definition });
    await waitForJob(reference.id, finished);
    const whole = await jobRecord(reference.id);
    expect(whole.job.status).toBe("successful");

    setEnv({ LISSOM_FANOUT_VERTICES: "3000", LISSOM_CHUNK_VERTICES: "2500" });
    writeFileSync(faults, JSON.stringify({ exitAt: [20] }));
    const job = await submit(dataset.version.id, { definition });
    await waitForJob(job.id, finished);
    const failed = await jobRecord(job.id);
    expect(failed.job.status).toBe("failed");
    const bad = failed.chunks.find((c) => c.featureStart! <= 20 && 20 < c.featureEnd!)!;
    expect(bad.status).toBe("failed");
    expect(bad.message).toMatch(/runner thread exited/);
    expect(failed.job.message).toContain(`chunk ${bad.chunkIndex! + 1}`);
    expect(failed.chunks.filter((c) => c.id !== bad.id).every((c) => c.status === "successful")).toBe(true);
    expect((await jobRecord(bad.id)).attempts.map((a) => a.status)).toEqual(["failed", "failed"]);
    expect(failed.outputs).toHaveLength(0);

    // The page offers the action; the operator uses it.
    const page = await import("../../../app/routes/job");
    const loaded = await call(page.loader as never, { request: request(`/jobs/${job.id}`, { cookie: operatorCookie }), params: { jobId: job.id } });
    expect((loaded.body as { chunks: { status: string }[] }).chunks.filter((c) => c.status === "failed")).toHaveLength(1);
    rmSync(faults);
    const form = new FormData();
    form.set("intent", "retry-chunks");
    const answer = await call(page.action as never, { request: request(`/jobs/${job.id}`, { method: "POST", body: form, cookie: operatorCookie }), params: { jobId: job.id } });
    expect(answer.status).toBe(302);
    await waitForJob(job.id, finished);
    setEnv({ LISSOM_FANOUT_VERTICES: "0" });
    const done = await jobRecord(job.id);
    expect(done.job.status).toBe("successful");
    // Only the failed chunk ran again.
    for (const c of done.chunks) {
      const tries = (await jobRecord(c.id)).attempts.map((a) => a.status);
      expect(tries).toEqual(c.id === bad.id ? ["failed", "failed", "successful"] : ["successful"]);
    }
    // Same file; only the attempt that wrote it differs (the merge after the retry is attempt 2).
    const merged = await geojsonOf(done);
    expect(merged).toMatch(/"attempt":\s*2/);
    expect(merged.replace(/"attempt":\s*2/, '"attempt":1')).toBe(await geojsonOf(whole));
    expect(done.reports).toHaveLength(dataset.features);
    expect(done.log.some((l) => /Retried chunk/.test(l.message))).toBe(true);
  });

  it("refuses to retry chunks of a job that was not cut, with a message", async () => {
    const dataset = await storeTownDataset("small town", 1_000, { seed: 2 });
    setEnv({ LISSOM_FANOUT_VERTICES: "0" });
    const job = await submit(dataset.version.id);
    await waitForJob(job.id, finished);
    const page = await import("../../../app/routes/job");
    const form = new FormData();
    form.set("intent", "retry-chunks");
    const answer = await call(page.action as never, { request: request(`/jobs/${job.id}`, { method: "POST", body: form, cookie: operatorCookie }), params: { jobId: job.id } });
    expect(answer.status).toBe(409);
    expect((answer.body as { error: string }).error).toMatch(/can be retried once the job has failed/);
  });
});

/**
 * The job runner end to end, on the embedded in-memory Redis (default) and on redis-server when
 * REDIS_URL is set: fan-out into chunk jobs with an in-order merge, retries with the
 * definition's backoff, errors no retry can fix, dismissal of a fanned-out job, a graceful stop,
 * and lock renewal while a long feature is fitted.
 *
 * The expectations come from the product's contracts (DESIGN.md "Shape": the database is the
 * source of truth, chunks are child jobs of a BullMQ flow; issue 5: a chunked run merges into
 * what a single run produces) and from BullMQ 6.7.0's documented behaviour (docs.bullmq.io:
 * Flows, "Retrying failing jobs" with custom backoff strategies, "Stalled jobs").
 */
import { readdirSync, readFileSync, renameSync, existsSync } from "node:fs";
import { join } from "node:path";
import type { Worker } from "bullmq";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import {
  backendName,
  closeApp,
  comparable,
  dropQueueKeys,
  finished,
  jobRecord,
  privateEnv,
  setEnv,
  storeDefinition,
  storeTownDataset,
  submit,
  waitFor,
  waitForJob,
  type RunnerEnv,
} from "./harness";

let env: RunnerEnv;
let worker: Worker;
let dataset: Awaited<ReturnType<typeof storeTownDataset>>;
let workerModule: typeof import("../../../jobs/worker-core");

const FANNED = { LISSOM_FANOUT_VERTICES: "5000", LISSOM_CHUNK_VERTICES: "4000" };
const WHOLE = { LISSOM_FANOUT_VERTICES: "0" };

beforeAll(async () => {
  env = privateEnv("runner");
  const { migrateDatabase } = await import("../../../app/.server/db/client.server");
  await migrateDatabase();
  dataset = await storeTownDataset("runner town", 20_000);
  workerModule = await import("../../../jobs/worker-core");
  worker = workerModule.startJobWorker({ concurrency: 2 });
});

afterAll(async () => {
  await workerModule?.shutdownJobWorker(worker, 10_000);
  await closeApp();
  await dropQueueKeys(env.prefix);
});

async function outputText(record: Awaited<ReturnType<typeof jobRecord>>, format: string): Promise<string> {
  const { storagePath } = await import("../../../app/.server/storage.server");
  const output = record.outputs.find((o) => o.format === format);
  if (!output) throw new Error(`job ${record.job.id} has no ${format} output`);
  return comparable(readFileSync(storagePath(output.storagePath), "utf8"), record.job.id);
}

const reportFigures = (r: { featureIndex: number; verticesIn: number; segmentsOut: number; maxDeviation: number; rmsDeviation: number; status: string; reason: string | null }) => ({
  featureIndex: r.featureIndex,
  verticesIn: r.verticesIn,
  segmentsOut: r.segmentsOut,
  maxDeviation: r.maxDeviation,
  rmsDeviation: r.rmsDeviation,
  status: r.status,
  reason: r.reason,
});

describe(`the job runner on ${backendName}`, () => {
  let whole: Awaited<ReturnType<typeof jobRecord>>;

  it("runs a dataset below the threshold as one job", async () => {
    setEnv(WHOLE);
    const job = await submit(dataset.version.id, { formats: ["geojson", "ndjson"] });
    await waitForJob(job.id, finished);
    whole = await jobRecord(job.id);
    expect(whole.job.status).toBe("successful");
    expect(whole.chunks).toHaveLength(0);
    expect(whole.reports).toHaveLength(dataset.features);
    expect(whole.outputs.map((o) => o.format).sort()).toEqual(["geojson", "ndjson"]);
  });

  it("cuts a dataset above the threshold into chunk jobs whose merge gives the same files and reports", async () => {
    setEnv(FANNED);
    const job = await submit(dataset.version.id, { formats: ["geojson", "ndjson"] });
    await waitForJob(job.id, finished);
    setEnv(WHOLE);
    const fanned = await jobRecord(job.id);
    expect(fanned.job.status).toBe("successful");
    // 20 000 vertices in chunks of about 4 000 (whole features): at least four chunks.
    expect(fanned.chunks.length).toBeGreaterThanOrEqual(4);
    expect(fanned.chunks.every((c) => c.status === "successful")).toBe(true);
    // The chunks' ranges tile the input in order.
    fanned.chunks.forEach((c, i) => {
      expect(c.chunkIndex).toBe(i);
      if (i > 0) expect(c.featureStart).toBe(fanned.chunks[i - 1]!.featureEnd);
    });
    expect(fanned.chunks[0]!.featureStart).toBe(0);
    // Progress of the job = features done across its chunks.
    expect(fanned.job.featuresDone).toBe(dataset.features);
    expect(fanned.chunks.reduce((s, c) => s + c.featuresDone, 0)).toBe(dataset.features);
    expect(fanned.job.progress).toBe(100);
    // Same outputs, byte for byte apart from the job id and the time written.
    for (const format of ["geojson", "ndjson"]) expect(await outputText(fanned, format)).toBe(await outputText(whole, format));
    // One set of feature reports, on the job, equal to the single run's; none left on chunks.
    expect(fanned.reports.map(reportFigures)).toEqual(whole.reports.map(reportFigures));
    for (const c of fanned.chunks) expect((await jobRecord(c.id)).reports).toHaveLength(0);
    // The chunks' working files go once the job is published (just after its status is written).
    const { storagePath } = await import("../../../app/.server/storage.server");
    await waitFor(() => !existsSync(storagePath(`work/${job.id}`)), 10_000, "the chunks' working files to go");
    // Chunk jobs are not listed as jobs of their own.
    const { listJobs } = await import("../../../app/.server/jobs.server");
    const listed = (await listJobs({ limit: 1000 })).map((j) => j.id);
    expect(listed).toContain(job.id);
    for (const c of fanned.chunks) expect(listed).not.toContain(c.id);
  });

  it("retries an infrastructure failure with the definition's backoff, then succeeds", async () => {
    setEnv(WHOLE);
    const { storagePath } = await import("../../../app/.server/storage.server");
    const small = await storeTownDataset("runner retry", 2_000, { seed: 11 });
    const folder = storagePath(small.version.storagePath);
    const definition = await storeDefinition("retry fast", [], { maxAttempts: 4, backoffMs: 400 });
    renameSync(folder, `${folder}.away`); // the dataset's files are briefly unreachable
    const job = await submit(small.version.id, { definition });
    await waitFor(async () => (await jobRecord(job.id)).attempts.some((a) => a.status === "failed"), 30_000, "a failed first attempt");
    renameSync(`${folder}.away`, folder);
    await waitForJob(job.id, finished);
    const record = await jobRecord(job.id);
    expect(record.job.status).toBe("successful");
    expect(record.attempts.length).toBeGreaterThanOrEqual(2);
    expect(record.attempts.at(-1)!.status).toBe("successful");
    expect(record.attempts.slice(0, -1).every((a) => a.status === "failed" && /ENOENT/.test(a.error ?? ""))).toBe(true);
    // Equal jitter waits at least half the base delay before the first retry.
    expect(record.attempts[1]!.startedAt.getTime() - record.attempts[0]!.finishedAt!.getTime()).toBeGreaterThanOrEqual(200 - 5);
    expect(record.log.some((l) => l.level === "warn" && /Try 2 of 4/.test(l.message))).toBe(true);
  });

  it("fails at once, without retries, when no retry can help (an unknown step)", async () => {
    setEnv(WHOLE);
    const definition = await storeDefinition("broken", [], { maxAttempts: 3, backoffMs: 50 });
    const job = await submit(dataset.version.id, { steps: [{ step: "smooth-all-the-things", params: {} }], definition });
    await waitForJob(job.id, finished);
    const record = await jobRecord(job.id);
    expect(record.job.status).toBe("failed");
    expect(record.job.message).toMatch(/smooth-all-the-things/);
    expect(record.attempts).toHaveLength(1);
    expect(record.outputs).toHaveLength(0);
  });

  it("dismisses a fanned-out job: its chunks stop and nothing is published", async () => {
    setEnv(FANNED);
    const job = await submit(dataset.version.id);
    await waitForJob(job.id, (r) => r.featuresDone > 0 || finished(r), 60_000, "first features done");
    const { dismissJob } = await import("../../../app/.server/jobs.server");
    await dismissJob(job.id, "operator@example.com");
    await waitFor(async () => (await jobRecord(job.id)).chunks.every((c) => c.status !== "running" && c.status !== "accepted"), 30_000, "the chunks to stop");
    setEnv(WHOLE);
    // Let any entry still in the queue drain: each must find the job dismissed.
    const { jobQueue } = await import("../../../jobs/queue");
    await waitFor(async () => {
      const counts = await jobQueue().getJobCounts("active", "waiting", "waiting-children", "delayed", "prioritized");
      return Object.values(counts).every((n) => n === 0);
    }, 30_000, "the queue to drain");
    const record = await jobRecord(job.id);
    expect(record.job.status).toBe("dismissed");
    expect(record.outputs).toHaveLength(0);
    expect(record.reports).toHaveLength(0);
    const { storagePath } = await import("../../../app/.server/storage.server");
    expect(existsSync(storagePath(`outputs/${job.id}`))).toBe(false);
  });

  it("stops a running job after its current feature on shutdown and another worker finishes it", async () => {
    setEnv(WHOLE);
    const long = await storeTownDataset("runner long", 60_000, { seed: 5 });
    // The running worker is the only one: stop it, then check the job went back to the queue.
    const job = await submit(long.version.id);
    await waitForJob(job.id, (r) => r.status === "running" || finished(r), 60_000, "running");
    const inTime = await workerModule.shutdownJobWorker(worker, 20_000);
    expect(inTime).toBe(true);
    const stopped = await jobRecord(job.id);
    expect(stopped.job.status).toBe("accepted");
    expect(stopped.attempts).toHaveLength(1);
    expect(stopped.attempts[0]!.status).toBe("failed");
    expect(stopped.attempts[0]!.error).toMatch(/shut down/);
    expect(stopped.outputs).toHaveLength(0);
    worker = workerModule.startJobWorker({ concurrency: 2 });
    await waitForJob(job.id, finished);
    const record = await jobRecord(job.id);
    expect(record.job.status).toBe("successful");
    expect(record.attempts.map((a) => a.status)).toEqual(["failed", "successful"]);
    expect(record.reports).toHaveLength(long.features);
  });

  it("keeps its lock while one long feature is fitted (lock 500 ms, fit of a 60 000-vertex line)", async () => {
    setEnv(WHOLE);
    await workerModule.shutdownJobWorker(worker, 20_000);
    const stalled: string[] = [];
    worker = workerModule.startJobWorker({ concurrency: 1, lockDuration: 500 });
    worker.on("stalled", (id) => stalled.push(id));
    const long = await storeTownDataset("runner one line", 60_000, { seed: 3, longFeature: true });
    const job = await submit(long.version.id);
    await waitForJob(job.id, finished);
    const record = await jobRecord(job.id);
    expect(record.job.status).toBe("successful");
    expect(stalled).toEqual([]);
    expect(record.attempts.map((a) => a.status)).toEqual(["successful"]);
    expect(record.reports).toHaveLength(1);
    expect(record.reports[0]!.verticesIn).toBe(60_000);
  });
});

describe("the runner's storage layout", () => {
  it("leaves no staging folders behind after the jobs above", async () => {
    const { storagePath } = await import("../../../app/.server/storage.server");
    const staging = storagePath("staging");
    // Staging folders of the datasets were moved into place; the jobs' were moved or removed.
    expect(existsSync(staging) ? readdirSync(staging) : []).toEqual([]);
    expect(existsSync(join(env.dir, "storage", "outputs"))).toBe(true);
  });
});

/**
 * Fault: a step throws on one feature (a bug meeting one odd input). Issue 5: "that feature is
 * reported, the others finish", and it is not retried (BullMQ guidance: a fault no retry can fix
 * must not use up attempts). Runs on the embedded Redis, and on redis-server with REDIS_URL.
 */
import { writeFileSync } from "node:fs";
import { join } from "node:path";
import type { Worker } from "bullmq";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { backendName, closeApp, dropQueueKeys, finished, jobRecord, privateEnv, setEnv, storeTownDataset, submit, waitForJob, type RunnerEnv } from "../runner/harness";

let env: RunnerEnv;
let worker: Worker;
let workerModule: typeof import("../../../jobs/worker-core");
let dataset: Awaited<ReturnType<typeof storeTownDataset>>;

beforeAll(async () => {
  env = privateEnv("step-throws");
  const faults = join(env.dir, "faults.json");
  writeFileSync(faults, JSON.stringify({ throwAt: [3, 17] }));
  setEnv({ LISSOM_TEST_FAULTS: faults });
  const { migrateDatabase } = await import("../../../app/.server/db/client.server");
  await migrateDatabase();
  dataset = await storeTownDataset("faulty town", 12_000, { seed: 4 });
  workerModule = await import("../../../jobs/worker-core");
  worker = workerModule.startJobWorker({ concurrency: 2, stepsModule: join(import.meta.dirname, "faulty-steps.ts") });
});

afterAll(async () => {
  await workerModule?.shutdownJobWorker(worker, 10_000);
  await closeApp();
  await dropQueueKeys(env.prefix);
});

async function runAndCheck() {
  const job = await submit(dataset.version.id);
  await waitForJob(job.id, finished);
  const record = await jobRecord(job.id);
  expect(record.job.status).toBe("successful");
  // One attempt: the faults were per feature, not of the job.
  expect(record.attempts.map((a) => a.status)).toEqual(["successful"]);
  expect(record.reports).toHaveLength(dataset.features);
  for (const r of record.reports) {
    if (r.featureIndex === 3 || r.featureIndex === 17) {
      expect(r.status).toBe("error");
      expect(r.reason).toMatch(/step fit failed on this feature: simulated fault/);
    } else {
      expect(["ok", "repaired"]).toContain(r.status);
      expect(r.segmentsOut).toBeGreaterThan(0);
    }
  }
  // The log names each feature and why.
  const warnings = record.log.filter((l) => l.level === "warn" && l.featureIndex !== null).map((l) => l.featureIndex);
  expect(warnings.sort((a, b) => a! - b!)).toEqual([3, 17]);
  // The output still holds every feature, in order (the faulty ones as they came in).
  const { storagePath } = await import("../../../app/.server/storage.server");
  const { readFileSync } = await import("node:fs");
  const out = JSON.parse(readFileSync(storagePath(record.outputs[0]!.storagePath), "utf8")) as { features: { curves?: unknown }[] };
  expect(out.features).toHaveLength(dataset.features);
  expect(out.features[3]!.curves).toBeUndefined();
  expect(out.features[4]!.curves).toBeDefined();
  return record;
}

describe(`a step that throws on one feature, on ${backendName}`, () => {
  it("reports that feature and finishes the others, in one attempt", async () => {
    setEnv({ LISSOM_FANOUT_VERTICES: "0" });
    await runAndCheck();
  });

  it("does the same when the job is cut into chunks (the faulty features sit in different chunks)", async () => {
    setEnv({ LISSOM_FANOUT_VERTICES: "3000", LISSOM_CHUNK_VERTICES: "2500" });
    const record = await runAndCheck();
    expect(record.chunks.length).toBeGreaterThanOrEqual(3);
    const holding = (i: number) => record.chunks.find((c) => c.featureStart! <= i && i < c.featureEnd!)!.chunkIndex;
    expect(holding(3)).not.toBe(holding(17));
  });
});

/**
 * Fault: the storage folder becomes read-only (issue 5: "the job fails with the reason, the
 * previous outputs stay intact"). The folder is made read-only the strongest way this machine
 * allows: a read-only bind mount (EROFS, as a remounted disk gives), else permissions (for a
 * user other than root), else the immutable attribute (chattr +i, EPERM); the test is skipped,
 * saying why, when none of them makes a write fail. Runs on the embedded Redis, and on
 * redis-server with REDIS_URL.
 */
import { execFileSync } from "node:child_process";
import { chmodSync, mkdirSync, readFileSync, readdirSync, rmSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import type { Worker } from "bullmq";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { backendName, closeApp, dropQueueKeys, finished, jobRecord, privateEnv, storeDefinition, storeTownDataset, submit, waitForJob, type RunnerEnv } from "../runner/harness";

let env: RunnerEnv;
let worker: Worker | undefined;
let workerModule: typeof import("../../../jobs/worker-core");
let storage: string;
let undo: (() => void) | undefined;

function writable(dir: string): boolean {
  const probe = join(dir, `.probe-${process.pid}`);
  try {
    mkdirSync(probe);
    rmSync(probe, { recursive: true });
    return true;
  } catch {
    return false;
  }
}

function run(cmd: string, args: string[]): boolean {
  try {
    execFileSync(cmd, args, { stdio: "ignore" });
    return true;
  } catch {
    return false;
  }
}

/** Makes `dir` read-only; returns how, and how to undo it, or null when nothing worked. */
function makeReadOnly(dir: string): { how: string; undo: () => void } | null {
  if (run("mount", ["--bind", dir, dir])) {
    if (run("mount", ["-o", "remount,ro,bind", dir]) && !writable(dir)) return { how: "read-only bind mount", undo: () => void run("umount", [dir]) };
    run("umount", [dir]);
  }
  chmodSync(dir, 0o555);
  for (const sub of readdirSync(dir)) chmodSync(join(dir, sub), 0o555);
  if (!writable(dir) && !writable(join(dir, "outputs"))) {
    return { how: "permissions 0555", undo: () => [dir, ...readdirSync(dir).map((s) => join(dir, s))].forEach((p) => chmodSync(p, 0o755)) };
  }
  [dir, ...readdirSync(dir).map((s) => join(dir, s))].forEach((p) => chmodSync(p, 0o755));
  const folders = [dir, ...readdirSync(dir).map((s) => join(dir, s))];
  if (run("chattr", ["+i", ...folders]) && !writable(dir) && !writable(join(dir, "outputs"))) {
    return { how: "immutable attribute (chattr +i)", undo: () => void run("chattr", ["-i", ...folders]) };
  }
  run("chattr", ["-i", ...folders]);
  return null;
}

beforeAll(async () => {
  env = privateEnv("storage-ro");
  storage = env.env.STORAGE_DIR!;
  const { migrateDatabase } = await import("../../../app/.server/db/client.server");
  await migrateDatabase();
  workerModule = await import("../../../jobs/worker-core");
  worker = workerModule.startJobWorker({ concurrency: 1 });
});

afterAll(async () => {
  undo?.();
  if (worker) await workerModule.shutdownJobWorker(worker, 10_000);
  await closeApp();
  await dropQueueKeys(env.prefix);
});

describe(`a read-only storage folder, on ${backendName}`, () => {
  it("fails the job with the reason after its retries and leaves earlier outputs intact", async (t) => {
    const dataset = await storeTownDataset("storage town", 3_000, { seed: 12 });
    const definition = await storeDefinition("retry twice", [], { maxAttempts: 2, backoffMs: 100 });
    const earlier = await submit(dataset.version.id, { definition, formats: ["geojson", "csv"] });
    await waitForJob(earlier.id, finished);
    const before = await jobRecord(earlier.id);
    expect(before.job.status).toBe("successful");
    const { storagePath } = await import("../../../app/.server/storage.server");
    const files = before.outputs.map((o) => ({ path: storagePath(o.storagePath), bytes: readFileSync(storagePath(o.storagePath)) }));

    const readOnly = makeReadOnly(storage);
    if (!readOnly) {
      console.warn("skipped: this machine offers no way to make a folder read-only for this user (bind mount, permissions and chattr all failed)");
      t.skip();
      return;
    }
    undo = readOnly.undo;
    const job = await submit(dataset.version.id, { definition });
    await waitForJob(job.id, finished);
    const failed = await jobRecord(job.id);
    expect(failed.job.status).toBe("failed");
    expect(failed.job.message).toMatch(/^The storage folder (is read-only|refused access) \((EROFS|EACCES|EPERM)\)/);
    expect(failed.job.message).toMatch(/earlier outputs are untouched/);
    // An infrastructure fault: retried as the definition says, then failed.
    expect(failed.attempts.map((a) => a.status)).toEqual(["failed", "failed"]);
    expect(failed.outputs).toHaveLength(0);
    expect(failed.reports).toHaveLength(0);
    // The earlier job's outputs: same rows, same bytes.
    const after = await jobRecord(earlier.id);
    expect(after.outputs).toEqual(before.outputs);
    expect(after.reports).toHaveLength(before.reports.length);
    for (const f of files) expect(readFileSync(f.path).equals(f.bytes)).toBe(true);

    // Writable again: the operator's retry succeeds.
    readOnly.undo();
    undo = undefined;
    const { retryJob } = await import("../../../app/.server/jobs.server");
    await retryJob(job.id, "operator@example.com");
    await waitForJob(job.id, finished);
    expect((await jobRecord(job.id)).job.status).toBe("successful");
    writeFileSync(join(env.dir, "method.txt"), readOnly.how);
  });
});

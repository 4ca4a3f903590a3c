/**
 * Runner benchmark (issue 5): a dataset of 1 million vertices (samples/generate.ts
 * `generateLargeDataset`, the invented town tiled; LISSOM_BENCH_RUNNER_VERTICES to change it)
 * fitted end to end through the queue on a real Redis, first with one `npm run worker` process,
 * then with two, each with WORKER_CONCURRENCY=1 and the default fan-out settings.
 *
 * Printed:
 * - the wall time of each run, from submission to the job's `successful` status;
 * - speed-up = one-worker time / two-worker time (target ≥ 1.6× on a 2-core machine);
 * - share of time outside the geometry = 1 − geometry time / (workers × wall time), where the
 *   geometry time is what the runner threads measured around the step calls (summed from the
 *   chunks' log lines, "geometry <s> s"); everything else (queue, split, reading, writing,
 *   merge, database) counts as outside (target < 20 % with one worker).
 * The one-worker run is the reference of the two-worker run, in the same benchmark run.
 *
 * Needs REDIS_URL (a redis-server; its keys go under a prefix of their own and are removed).
 * Without it the benchmark says so and returns.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { cpus, tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { fileURLToPath } from "node:url";

const ROOT = resolve(fileURLToPath(import.meta.url), "../../..");
const STEPS = [{ step: "fit", params: { tolerance: 2 } }];

export default async function runnerBench(): Promise<void> {
  const redisUrl = process.env.REDIS_URL?.trim();
  if (!redisUrl) {
    console.log("runner: skipped (set REDIS_URL to a redis-server; the worker-scaling benchmark needs real worker processes)");
    return;
  }
  const vertices = Number(process.env.LISSOM_BENCH_RUNNER_VERTICES ?? 1_000_000);
  const dir = mkdtempSync(join(tmpdir(), "lissom-bench-runner-"));
  const prefix = `lissom-bench-${process.pid}-${Date.now().toString(36)}`;
  const env: Record<string, string> = {
    NODE_ENV: "production",
    LISSOM_DEMO: "0",
    LOG_LEVEL: "warn",
    AUTH_SECRET: "bench-secret-bench-secret-bench-secret-1",
    DATABASE_URL: `file:${join(dir, "lissom.db")}`,
    STORAGE_DIR: join(dir, "storage"),
    REDIS_URL: redisUrl,
    LISSOM_QUEUE_PREFIX: prefix,
    LISSOM_HEARTBEAT_MS: "500",
    WORKER_CONCURRENCY: "1",
  };
  const saved = Object.fromEntries(Object.keys(env).map((k) => [k, process.env[k]]));
  Object.assign(process.env, env);

  const { generateLargeDataset } = await import("../../samples/generate");
  const { migrateDatabase, db, schema } = await import("../../app/.server/db/client.server");
  const { ingestFile } = await import("../../app/.server/datasets.server");
  const { submitJob } = await import("../../app/.server/jobs.server");
  const { closeQueue } = await import("../../jobs/queue");
  const { eq, isNull, and } = await import("drizzle-orm");

  console.log(`runner: ${vertices.toLocaleString("en-GB")} vertices, fit at 2 m, ${cpus().length} cores; Redis ${redisUrl}`);
  const collection = generateLargeDataset(vertices);
  const file = join(dir, "bench-town.geojson");
  writeFileSync(file, JSON.stringify(collection));
  await migrateDatabase();
  const stored = await ingestFile("bench town", file, null);


  const children: ChildProcess[] = [];
  async function startWorkers(n: number): Promise<void> {
    const before = (await db().query.workers.findMany({ where: isNull(schema.workers.stoppedAt) })).length;
    for (let i = 0; i < n; i++) {
      const child = spawn(process.execPath, ["--import", "tsx", "jobs/worker.ts"], { cwd: ROOT, env: { ...process.env, ...env }, stdio: ["ignore", "ignore", "inherit"] });
      children.push(child);
    }
    // Each worker has written its heartbeat and started its runner thread before the clock starts.
    await waitFor(async () => (await db().query.workers.findMany({ where: isNull(schema.workers.stoppedAt) })).length >= before + n, 60_000);
    await new Promise((r) => setTimeout(r, 3000));
  }
  async function stopWorkers(): Promise<void> {
    for (const child of children.splice(0)) {
      const gone = new Promise((r) => child.once("exit", r));
      child.kill("SIGTERM");
      await gone;
    }
  }
  async function timedRun(label: string): Promise<{ ms: number; chunks: number; geometryMs: number }> {
    const t0 = performance.now();
    const job = await submitJob({ processId: "fit", steps: STEPS, inputs: { formats: ["geojson"] }, datasetVersionId: stored.version.id, userId: null });
    let row = job;
    await waitFor(async () => {
      row = (await db().query.jobs.findFirst({ where: eq(schema.jobs.id, job.id) }))!;
      if (row.status === "failed" || row.status === "dismissed") throw new Error(`${label}: the job ${row.status}: ${row.message}`);
      return row.status === "successful";
    }, 30 * 60_000, 100);
    const ms = performance.now() - t0;
    const chunks = (await db().query.jobs.findMany({ where: and(eq(schema.jobs.parentId, job.id)) })).length;
    // The runner threads' own measure of the time inside the steps, per chunk (or per job).
    const lines = await db().query.logEntries.findMany({ where: eq(schema.logEntries.jobId, job.id) });
    const geometryMs = lines.reduce((sum, l) => sum + Number(/geometry ([\d.]+) s/.exec(l.message)?.[1] ?? 0) * 1000, 0);
    console.log(
      `  ${label}: ${(ms / 1000).toFixed(1)} s end to end (${chunks} chunks; ${row.message}); geometry ${(geometryMs / 1000).toFixed(1)} s (${Math.round(vertices / (geometryMs / 1000)).toLocaleString("en-GB")} vertices/s per thread)`,
    );
    return { ms, chunks, geometryMs };
  }

  try {
    await startWorkers(1);
    const one = await timedRun("one worker");
    await startWorkers(1);
    const two = await timedRun("two workers");
    const speedUp = one.ms / two.ms;
    const outsideOne = 1 - one.geometryMs / one.ms;
    const outsideTwo = 1 - two.geometryMs / (2 * two.ms);
    console.log(`  speed-up, two workers over one: ${speedUp.toFixed(2)}× (target ≥ 1.6×) ${speedUp >= 1.6 ? "reached" : "NOT reached"}`);
    console.log(`  time outside the geometry, one worker: ${(outsideOne * 100).toFixed(1)} % (target < 20 %) ${outsideOne < 0.2 ? "reached" : "NOT reached"}`);
    console.log(`  time outside the geometry, two workers (of 2 × wall time): ${(outsideTwo * 100).toFixed(1)} %`);
  } finally {
    await stopWorkers();
    await closeQueue();
    const { dropQueueKeys } = await import("../integration/runner/harness");
    await dropQueueKeys(prefix);
    rmSync(dir, { recursive: true, force: true });
    for (const [k, v] of Object.entries(saved)) {
      if (v === undefined) delete process.env[k];
      else process.env[k] = v;
    }
  }
}

async function waitFor(check: () => Promise<boolean>, timeoutMs: number, everyMs = 200): Promise<void> {
  const end = Date.now() + timeoutMs;
  while (!(await check())) {
    if (Date.now() > end) throw new Error(`runner bench: timed out after ${timeoutMs} ms`);
    await new Promise((r) => setTimeout(r, everyMs));
  }
}

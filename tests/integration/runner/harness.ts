/**
 * Set-up shared by the runner and fault tests: a private database, storage folder and queue
 * prefix per test file, datasets generated from the invented town (samples/generate.ts), and
 * helpers to submit and wait for jobs. The queue is the embedded in-memory Redis unless
 * REDIS_URL is set; on a real Redis every key lives under this file's own prefix and is
 * deleted at the end.
 */
import { spawn, spawnSync, type ChildProcess } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { createServer } from "node:net";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import type { Redis } from "ioredis";
import { generateLargeDataset } from "../../../samples/generate";

export const realRedis = Boolean(process.env.REDIS_URL && process.env.REDIS_URL.trim());
export const backendName = realRedis ? "redis-server (REDIS_URL)" : "the embedded in-memory Redis";
export const hasRedisServer = spawnSync("redis-server", ["--version"]).status === 0;
export const ROOT = resolve(import.meta.dirname, "../../..");

export interface RunnerEnv {
  dir: string;
  prefix: string;
  env: Record<string, string>;
}

/**
 * Points this process at a private database, storage folder and queue prefix. Must run before
 * any app module reads its settings (import app modules dynamically after calling it).
 */
export function privateEnv(label: string, extra: Record<string, string> = {}): RunnerEnv {
  const dir = mkdtempSync(join(tmpdir(), `lissom-${label}-`));
  const prefix = `lissom-test-${label}-${process.pid}-${Date.now().toString(36)}`;
  const env: Record<string, string> = {
    NODE_ENV: "test",
    LISSOM_DEMO: "0",
    DATABASE_URL: `file:${join(dir, "lissom.db")}`,
    STORAGE_DIR: join(dir, "storage"),
    AUTH_SECRET: "test-secret-test-secret-test-secret-42",
    PUBLIC_URL: "http://lissom.test",
    LISSOM_QUEUE_PREFIX: prefix,
    LISSOM_HEARTBEAT_MS: "200",
    LISSOM_FANOUT_VERTICES: "0",
    ...extra,
  };
  Object.assign(process.env, env);
  if (!realRedis && !("REDIS_URL" in extra)) delete process.env.REDIS_URL;
  return { dir, prefix, env };
}

/** Applies the same variables again (a test that changed some for one job). */
export function setEnv(vars: Record<string, string | undefined>): void {
  for (const [k, v] of Object.entries(vars)) {
    if (v === undefined) delete process.env[k];
    else process.env[k] = v;
  }
}

/**
 * A GeoJSON dataset of the invented town with `vertices` vertices, stored as a dataset version.
 * `longFeature` joins all lines into one LineString (one long uninterrupted fit).
 */
export async function storeTownDataset(name: string, vertices: number, options: { seed?: number; longFeature?: boolean } = {}) {
  const fc = generateLargeDataset(vertices, options.seed ?? 7);
  let collection: object = fc;
  if (options.longFeature) {
    const coordinates = fc.features.flatMap((f) => (f.geometry.type === "LineString" ? f.geometry.coordinates : f.geometry.coordinates[0]!));
    collection = { type: "FeatureCollection", features: [{ type: "Feature", properties: { name: "joined town linework" }, geometry: { type: "LineString", coordinates } }] };
  }
  const dir = mkdtempSync(join(tmpdir(), "lissom-dataset-"));
  const path = join(dir, `${name}.geojson`);
  writeFileSync(path, JSON.stringify(collection));
  const { ingestFile } = await import("../../../app/.server/datasets.server");
  const stored = await ingestFile(name, path, null);
  return { ...stored, features: (collection as { features: unknown[] }).features.length };
}

/** A definition row with its own retry settings (as the definitions module stores them). */
export async function storeDefinition(name: string, steps: object[], retry: { maxAttempts: number; backoffMs: number }, formats: string[] = ["geojson"]) {
  const { db, schema } = await import("../../../app/.server/db/client.server");
  const id = crypto.randomUUID();
  await db().insert(schema.definitions).values({ id, name, version: 1, steps, formats, maxAttempts: retry.maxAttempts, backoffMs: retry.backoffMs });
  return { id, ...retry };
}

export const FIT = [{ step: "fit", params: { tolerance: 2 } }];

export async function submit(versionId: string, options: { steps?: object[]; formats?: string[]; definition?: { id: string; maxAttempts: number } } = {}) {
  const { submitJob } = await import("../../../app/.server/jobs.server");
  return submitJob({
    processId: "fit",
    steps: (options.steps ?? FIT) as never,
    inputs: { formats: options.formats ?? ["geojson"] },
    datasetVersionId: versionId,
    definitionId: options.definition?.id ?? null,
    maxAttempts: options.definition?.maxAttempts,
    userId: null,
  });
}

export async function jobRow(id: string) {
  const { db, schema } = await import("../../../app/.server/db/client.server");
  const { eq } = await import("drizzle-orm");
  const row = await db().query.jobs.findFirst({ where: eq(schema.jobs.id, id) });
  if (!row) throw new Error(`no job ${id}`);
  return row;
}

/** Polls the job row until `check` holds; fails with the row's last state after `timeoutMs`. */
export async function waitForJob(id: string, check: (row: Awaited<ReturnType<typeof jobRow>>) => boolean, timeoutMs = 60_000, what = "the expected state") {
  const end = Date.now() + timeoutMs;
  for (;;) {
    const row = await jobRow(id);
    if (check(row)) return row;
    if (Date.now() > end) throw new Error(`job ${id} did not reach ${what} within ${timeoutMs} ms: status ${row.status}, ${row.featuresDone}/${row.featuresTotal} features, message ${row.message}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

export const finished = (row: { status: string }) => row.status === "successful" || row.status === "failed" || row.status === "dismissed";

export async function waitFor(check: () => boolean | Promise<boolean>, timeoutMs = 30_000, what = "condition"): Promise<void> {
  const end = Date.now() + timeoutMs;
  for (;;) {
    if (await check()) return;
    if (Date.now() > end) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

/** Everything the database holds about one job's results. */
export async function jobRecord(id: string) {
  const { db, schema } = await import("../../../app/.server/db/client.server");
  const { asc, eq } = await import("drizzle-orm");
  const d = db();
  return {
    job: await jobRow(id),
    attempts: await d.query.attempts.findMany({ where: eq(schema.attempts.jobId, id), orderBy: [asc(schema.attempts.number)] }),
    outputs: await d.query.outputs.findMany({ where: eq(schema.outputs.jobId, id) }),
    reports: await d.query.featureReports.findMany({ where: eq(schema.featureReports.jobId, id), orderBy: [asc(schema.featureReports.featureIndex)] }),
    log: await d.query.logEntries.findMany({ where: eq(schema.logEntries.jobId, id), orderBy: [asc(schema.logEntries.id)] }),
    chunks: await d.query.jobs.findMany({ where: eq(schema.jobs.parentId, id), orderBy: [asc(schema.jobs.chunkIndex)] }),
  };
}

/** Deletes this file's queue keys on a real Redis (the embedded one dies with the process). */
export async function dropQueueKeys(prefix: string): Promise<void> {
  if (!realRedis) return;
  const { Redis } = await import("ioredis");
  const conn: Redis = new Redis(process.env.REDIS_URL!);
  let cursor = "0";
  do {
    const [next, keys] = await conn.scan(cursor, "MATCH", `${prefix}:*`, "COUNT", 1000);
    cursor = next;
    if (keys.length) await conn.del(...keys);
  } while (cursor !== "0");
  await conn.quit();
}

/** Closes what the app modules opened in this process. */
export async function closeApp(): Promise<void> {
  const { stopReconciler } = await import("../../../app/.server/jobs.server");
  stopReconciler();
  const { closeQueue } = await import("../../../jobs/queue");
  await closeQueue();
}

/**
 * A worker process (`npm run worker`'s entry) with this file's settings. Node runs it with tsx
 * as a loader, in one process, so a signal reaches the worker itself (the tsx command line
 * would run it in a child process of its own).
 */
export function spawnWorkerProcess(env: Record<string, string>): { child: ChildProcess; output: () => string; exited: Promise<number | null> } {
  const child = spawn(process.execPath, ["--import", "tsx", "jobs/worker.ts"], {
    cwd: ROOT,
    env: { ...process.env, ...env, LOG_LEVEL: "info" },
    stdio: ["ignore", "pipe", "pipe"],
  });
  let out = "";
  child.stdout!.on("data", (d) => (out += d));
  child.stderr!.on("data", (d) => (out += d));
  const exited = new Promise<number | null>((r) => child.once("exit", (code) => r(code)));
  return { child, output: () => out, exited };
}

export async function freePort(): Promise<number> {
  return new Promise((resolvePort, reject) => {
    const srv = createServer();
    srv.listen(0, "127.0.0.1", () => {
      const { port } = srv.address() as { port: number };
      srv.close(() => resolvePort(port));
    });
    srv.on("error", reject);
  });
}

/** A redis-server of this test's own (no persistence), ready to take connections. */
export async function startRedisServer(port: number): Promise<ChildProcess> {
  const child = spawn("redis-server", ["--port", String(port), "--bind", "127.0.0.1", "--save", "", "--appendonly", "no"], { stdio: ["ignore", "pipe", "pipe"] });
  await new Promise<void>((resolveStart, reject) => {
    const timer = setTimeout(() => reject(new Error("redis-server did not start within 5 s")), 5000);
    child.stdout!.on("data", (chunk: Buffer) => {
      if (chunk.toString().includes("Ready to accept connections")) {
        clearTimeout(timer);
        resolveStart();
      }
    });
    child.once("exit", (code) => reject(new Error(`redis-server exited with ${code}`)));
  });
  return child;
}

export async function stopProcess(child: ChildProcess, signal: NodeJS.Signals = "SIGKILL"): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) return;
  const gone = new Promise((r) => child.once("exit", r));
  child.kill(signal);
  await gone;
}

/** The output files' text with what differs between two jobs by design (job id, time written) blanked. */
export function comparable(text: string, jobId: string): string {
  return text.split(jobId).join("<job>").replace(/"written":\s*"[^"]*"/g, '"written":"<time>"');
}

import { constants } from "node:fs";
import { access, readdir, stat } from "node:fs/promises";
import { join } from "node:path";
import { and, asc, count, desc, eq, inArray, sql } from "drizzle-orm";
import { db, schema } from "../app/.server/db/client.server";
import { commitStagingDir, makeStagingDir, removeStored, storagePath, storageRoot } from "../app/.server/storage.server";
import { OUTPUT_EXTENSIONS, OUTPUT_MEDIA_TYPES, wantsInputLayer, type OutputFormat } from "../app/formats";
import { jobLog, type JobLog } from "./job-log";
import type { FeatureReport } from "./steps";
import { enqueueChunks } from "./runner/enqueue";
import { CONTROL_DONE, newControl, type PipelineResult, type PipelineTask, type StepSpec, type WrittenFile } from "./runner/pipeline";
import { runnerSettings } from "./runner/settings";
import { requestStop, runInline, type ThreadPool } from "./runner/thread-pool";

export type { StepSpec } from "./runner/pipeline";

type JobRow = typeof schema.jobs.$inferSelect;

export interface RunContext {
  /** Runs pipeline tasks in worker threads; without one they run on the calling thread. */
  pool?: ThreadPool;
  /** Shared with the pipeline; the worker sets its stop slot on shutdown. */
  control?: Int32Array;
  /** True once the worker asked this run to stop for a shutdown (not a dismissal). */
  shuttingDown?: () => boolean;
  /** Another step runner module (tests). */
  stepsModule?: string;
  /** Called with 0–100 as features finish. */
  onProgress?: (percent: number) => Promise<unknown> | unknown;
}

/**
 * - `successful`, `dismissed`: the job (or chunk) reached that state;
 * - `fanned-out`: the job was cut into chunks, queued as a flow;
 * - `stopped`: the worker is shutting down; the entry goes back to the queue, untouched;
 * - `failed`: the merge found failed chunks and marked the job failed (nothing to retry);
 * - `superseded`: nothing to do (another entry owns the job, or it already finished).
 */
export type RunOutcome = "successful" | "dismissed" | "fanned-out" | "stopped" | "failed" | "superseded";

/** Input that no retry can fix (a missing dataset, an unknown step): the job fails at once. */
export class PermanentJobError extends Error {
  override name = "PermanentJobError";
}

/** Errors of the storage folder that another attempt may not meet (a full disk freed, a mount back). */
const STORAGE_ERROR_CODES = new Set(["EACCES", "EPERM", "EROFS", "ENOSPC", "EDQUOT", "EIO"]);

/** A storage failure with a message an operator can act on; retried like any infrastructure error. */
export function describeStorageError(error: unknown): Error {
  const code = (error as { code?: unknown } | null)?.code;
  if (typeof code === "string" && STORAGE_ERROR_CODES.has(code)) {
    const what = code === "ENOSPC" || code === "EDQUOT" ? "is full" : code === "EROFS" ? "is read-only" : code === "EIO" ? "had an I/O error" : "refused access";
    return new Error(`The storage folder ${what} (${code}): ${(error as Error).message}. Check STORAGE_DIR's free space and permissions; earlier outputs are untouched.`, { cause: error });
  }
  return error instanceof Error ? error : new Error(String(error));
}

const TICK_MS = 300;
/** Per-feature warnings written to a job's log; beyond this, one summary line. */
const MAX_FEATURE_LOG_LINES = 200;

const CAUTION =
  "Approximation within the stated tolerance. Not for legal boundary definition or for locating buried utilities; defer to local survey codes and licensed surveyors.";

// ---------------------------------------------------------------------------------------------
// Entry points (one per queue entry kind)

/**
 * Runs one attempt of a job: streams the dataset version's features through the job's steps
 * (in a worker thread), writes the outputs to a staging folder and, only when every feature is
 * done, moves them into place and records outputs, feature reports and the final status in one
 * transaction. A rerun starts from scratch, so an attempt that died half-way leaves nothing
 * behind that counts. A dataset above the fan-out threshold is instead cut into chunk jobs.
 */
export async function runJob(jobId: string, ctx: RunContext = {}): Promise<RunOutcome> {
  const job = await loadJob(jobId);
  if (job.status === "dismissed" || job.status === "successful") return job.status === "dismissed" ? "dismissed" : "superseded";
  const existingChunks = await chunkRows(job.id);
  if (existingChunks.length > 0 && (await chunkInputsPresent(job.id, existingChunks))) {
    // A rerun after the job was already cut: queue what is left of it.
    await enqueueChunks(job.id);
    return "fanned-out";
  }
  const attempt = await beginAttempt(job.id);
  const source = await loadSource(job);
  const settings = runnerSettings();
  if (!job.parentId && settings.LISSOM_FANOUT_VERTICES > 0 && source.vertices > settings.LISSOM_FANOUT_VERTICES) {
    return splitJob(job, attempt, source, settings.LISSOM_CHUNK_VERTICES, ctx);
  }
  return runWhole(job, attempt, source, ctx);
}

/** Runs one chunk of a fanned-out job into its chunk output file. */
export async function runChunk(chunkId: string, ctx: RunContext = {}): Promise<RunOutcome> {
  const chunk = await loadJob(chunkId);
  if (!chunk.parentId) throw new PermanentJobError(`Job ${chunkId} is not a chunk of another job.`);
  const parent = await loadJob(chunk.parentId);
  if (parent.status === "dismissed" || chunk.status === "dismissed") return "dismissed";
  if (chunk.status === "successful" || parent.status === "successful") return "superseded";
  const d = db();
  const attempt = await beginAttempt(chunk.id);
  const source = await loadSource(parent);
  const started = new Date();
  const label = `Chunk ${chunk.chunkIndex! + 1}`;
  await d.update(schema.jobs).set({ status: "running", startedAt: chunk.startedAt ?? started, progress: 0, featuresDone: 0, message: null, updatedAt: started }).where(eq(schema.jobs.id, chunk.id));
  await d
    .update(schema.jobs)
    .set({ status: "running", startedAt: parent.startedAt ?? started, updatedAt: started })
    .where(and(eq(schema.jobs.id, parent.id), eq(schema.jobs.status, "accepted")));
  const log = jobLog(parent.id, null);
  const chunkLog = prefixedLog(log, `${label}: `);
  await chunkLog.info(`attempt ${attempt} started (features ${chunk.featureStart}–${chunk.featureEnd! - 1}).`);

  const staging = await storage(() => makeStagingDir());
  const reports: FeatureReport[] = [];
  const run = await runTaskInto(
    staging,
    ctx,
    { kind: "process", input: { chunkFile: storagePath(splitFile(parent.id, chunk.chunkIndex!)), crs: source.crs }, steps: job_steps(parent), output: { kind: "chunk", path: join(staging, "output.ndjson"), inputLayer: wantsInputLayer(outputFormats(parent.inputs)) }, stepsModule: ctx.stepsModule },
    { job: chunk, parent, log: chunkLog, reports, total: chunk.featuresTotal },
  );
  if (run.outcome !== "done") {
    await removeStored(staging);
    return finishEarly(chunk, attempt, run.outcome, chunkLog);
  }
  const relative = chunkDir(parent.id, chunk.chunkIndex!);
  await placeStaging(staging, relative);
  const result = run.result as Extract<PipelineResult, { kind: "process" }>;
  const finished = new Date();
  await d.transaction(async (tx) => {
    await tx.delete(schema.featureReports).where(eq(schema.featureReports.jobId, chunk.id));
    await insertReports(tx, chunk.id, reports);
    await tx.update(schema.attempts).set({ status: "successful", finishedAt: finished }).where(and(eq(schema.attempts.jobId, chunk.id), eq(schema.attempts.number, attempt)));
    await tx
      .update(schema.jobs)
      .set({ status: "successful", progress: 100, featuresDone: result.features, finishedAt: finished, updatedAt: finished, message: `${plural(result.features, "feature")}: ${countStatuses(reports)}` })
      .where(and(eq(schema.jobs.id, chunk.id), sql`${schema.jobs.status} != 'dismissed'`));
  });
  await updateParentProgress(parent.id);
  await chunkLog.info(`done: ${plural(result.features, "feature")} (${countStatuses(reports)}) in ${seconds(result.elapsedMs)}, ${geometry(result.geometryMs, result.elapsedMs)}.`);
  return "successful";
}

/**
 * The merge of a fanned-out job, once every chunk has finished: with all chunks successful,
 * their outputs are joined in chunk order (input order) into the job's outputs and their
 * feature reports become the job's; otherwise the job fails, naming the failed chunks.
 */
export async function runMerge(jobId: string, ctx: RunContext = {}): Promise<RunOutcome> {
  const d = db();
  const job = await loadJob(jobId);
  if (job.status === "dismissed") return "dismissed";
  if (job.status === "successful") return "superseded";
  const chunks = await chunkRows(job.id);
  if (chunks.length === 0) throw new PermanentJobError(`Job ${jobId} has no chunks to merge.`);
  if (chunks.some((c) => c.status === "accepted" || c.status === "running")) return "superseded";
  const log = jobLog(job.id, null);
  const bad = chunks.filter((c) => c.status !== "successful");
  if (bad.length > 0) {
    const first = bad[0]!;
    const message = `${bad.length} of ${plural(chunks.length, "chunk")} did not succeed (chunk ${first.chunkIndex! + 1}: ${first.message ?? first.status}). Retry the failed chunks from the job page.`;
    const now = new Date();
    await d.update(schema.attempts).set({ status: "failed", error: message, finishedAt: now }).where(and(eq(schema.attempts.jobId, job.id), eq(schema.attempts.status, "running")));
    await d.update(schema.jobs).set({ status: "failed", message, finishedAt: now, updatedAt: now }).where(and(eq(schema.jobs.id, job.id), sql`${schema.jobs.status} != 'dismissed'`));
    await log.error(`Failed: ${message}`);
    return "failed";
  }
  const running = await d.query.attempts.findFirst({ where: and(eq(schema.attempts.jobId, job.id), eq(schema.attempts.status, "running")), orderBy: [desc(schema.attempts.number)] });
  const attempt = running?.number ?? (await beginAttempt(job.id));
  const source = await loadSource(job);
  await d.update(schema.jobs).set({ status: "running", updatedAt: new Date() }).where(and(eq(schema.jobs.id, job.id), sql`${schema.jobs.status} != 'dismissed'`));
  await log.info(`Merging ${plural(chunks.length, "chunk")} in input order.`);
  const staging = await storage(() => makeStagingDir());
  const output = finalOutput(job, source, attempt, staging);
  const run = await runTaskInto(staging, ctx, { kind: "merge", chunkFiles: chunks.map((c) => storagePath(`${chunkDir(job.id, c.chunkIndex!)}/output.ndjson`)), output }, { job, parent: null, log, reports: [], total: null, quiet: true });
  if (run.outcome !== "done") {
    await removeStored(staging);
    return finishEarly(job, attempt, run.outcome, log);
  }
  const result = run.result as Extract<PipelineResult, { kind: "merge" }>;
  const chunkIds = chunks.map((c) => c.id);
  const statusRows = await d
    .select({ status: schema.featureReports.status, n: count() })
    .from(schema.featureReports)
    .where(inArray(schema.featureReports.jobId, chunkIds))
    .groupBy(schema.featureReports.status);
  const counts = statusRows.map((r) => `${r.n} ${r.status}`).join(", ") || "none";
  await publish(job, attempt, staging, result.written, output.metadata, result.features, counts, async (tx) => {
    await tx.update(schema.featureReports).set({ jobId: job.id }).where(inArray(schema.featureReports.jobId, chunkIds));
  });
  await removeStored(`work/${job.id}`);
  await ctx.onProgress?.(100);
  return "successful";
}

// ---------------------------------------------------------------------------------------------
// Whole runs and splitting

interface Source {
  version: typeof schema.datasetVersions.$inferSelect;
  datasetName: string | undefined;
  crs: string;
  features: number | null;
  vertices: number;
  inputFiles: { name: string; path: string }[];
}

/**
 * Moves a finished staging folder to `relative`, replacing what an earlier attempt left there;
 * if storage refuses, the staging folder is removed and the error goes on (nothing half-placed).
 */
async function placeStaging(staging: string, relative: string): Promise<void> {
  await storage(async () => {
    await removeStored(relative);
    await commitStagingDir(staging, relative);
  }).catch(async (error: unknown) => {
    await removeStored(staging);
    throw error;
  });
}

/** An attempt begins: the job is running again from no progress. */
async function markRunning(job: JobRow, source: Source): Promise<void> {
  const started = new Date();
  await db()
    .update(schema.jobs)
    .set({ status: "running", startedAt: job.startedAt ?? started, progress: 0, featuresDone: 0, featuresTotal: source.features, message: null, updatedAt: started })
    .where(eq(schema.jobs.id, job.id));
}

async function runWhole(job: JobRow, attempt: number, source: Source, ctx: RunContext): Promise<RunOutcome> {
  await markRunning(job, source);
  const log = jobLog(job.id, attempt);
  const steps = job_steps(job);
  await log.info(`Attempt ${attempt} started: ${steps.map((s) => s.step).join(" → ")} on ${source.datasetName ?? "dataset"} v${source.version.version} (${source.features ?? "?"} features).`);

  const staging = await storage(() => makeStagingDir());
  const output = finalOutput(job, source, attempt, staging);
  const reports: FeatureReport[] = [];
  const run = await runTaskInto(
    staging,
    ctx,
    { kind: "process", input: { files: source.inputFiles, crs: source.crs }, steps, output, stepsModule: ctx.stepsModule },
    { job, parent: null, log, reports, total: source.features },
  );
  if (run.outcome !== "done") {
    await removeStored(staging);
    return finishEarly(job, attempt, run.outcome, log);
  }
  const result = run.result as Extract<PipelineResult, { kind: "process" }>;
  await publish(job, attempt, staging, result.written, output.metadata, result.features, countStatuses(reports), async (tx) => insertReports(tx, job.id, reports), result);
  await ctx.onProgress?.(100);
  return "successful";
}

async function splitJob(job: JobRow, attempt: number, source: Source, chunkVertices: number, ctx: RunContext): Promise<RunOutcome> {
  await markRunning(job, source);
  const log = jobLog(job.id, attempt);
  await log.info(
    `Attempt ${attempt} started: ${source.vertices.toLocaleString("en-GB")} vertices is above the fan-out threshold, so the dataset is cut into chunks of about ${chunkVertices.toLocaleString("en-GB")} vertices that run as separate queue entries.`,
  );
  const staging = await storage(() => makeStagingDir());
  const run = await runTaskInto(staging, ctx, { kind: "split", input: { files: source.inputFiles, crs: source.crs }, dir: staging, chunkVertices }, { job, parent: null, log, reports: [], total: null, quiet: true });
  if (run.outcome !== "done") {
    await removeStored(staging);
    return finishEarly(job, attempt, run.outcome, log);
  }
  const result = run.result as Extract<PipelineResult, { kind: "split" }>;
  await removeStored(`work/${job.id}`);
  await placeStaging(staging, `work/${job.id}/split`);
  const now = new Date();
  await db().transaction(async (tx) => {
    await tx.delete(schema.jobs).where(eq(schema.jobs.parentId, job.id));
    for (const c of result.chunks) {
      await tx.insert(schema.jobs).values({
        id: crypto.randomUUID(),
        processId: job.processId,
        queueId: null,
        inputs: job.inputs,
        definitionId: job.definitionId,
        parentId: job.id,
        chunkIndex: c.index,
        featureStart: c.start,
        featureEnd: c.end,
        datasetVersionId: job.datasetVersionId,
        steps: job.steps,
        status: "accepted",
        featuresTotal: c.features,
        priority: job.priority,
        maxAttempts: job.maxAttempts,
        submittedBy: job.submittedBy,
        updatedAt: now,
      });
    }
    const total = result.chunks.reduce((s, c) => s + c.features, 0);
    await tx.update(schema.jobs).set({ featuresTotal: total, message: `Cut into ${plural(result.chunks.length, "chunk")}.`, updatedAt: now }).where(eq(schema.jobs.id, job.id));
  });
  await enqueueChunks(job.id);
  await log.info(`Cut into ${plural(result.chunks.length, "chunk")} in ${seconds(result.elapsedMs)}; the chunks are queued.`);
  return "fanned-out";
}

/** Relative path of a chunk's input file. */
export function splitFile(parentId: string, chunkIndex: number): string {
  return `work/${parentId}/split/chunk-${chunkIndex}.ndjson`;
}

/** Relative folder of a chunk's committed output. */
export function chunkDir(parentId: string, chunkIndex: number): string {
  return `work/${parentId}/chunks/${chunkIndex}`;
}

async function chunkInputsPresent(parentId: string, chunks: JobRow[]): Promise<boolean> {
  for (const c of chunks) {
    if (c.status === "successful") continue;
    try {
      await stat(storagePath(splitFile(parentId, c.chunkIndex!)));
    } catch {
      return false;
    }
  }
  return true;
}

export async function chunkRows(parentId: string): Promise<JobRow[]> {
  return db().query.jobs.findMany({ where: eq(schema.jobs.parentId, parentId), orderBy: [asc(schema.jobs.chunkIndex)] });
}

// ---------------------------------------------------------------------------------------------
// Running a pipeline task with progress, dismissal and shutdown

interface Watch {
  job: JobRow;
  /** For a chunk: the fanned-out job, whose progress and dismissal count too. */
  parent: JobRow | null;
  log: JobLog;
  /** Reports arriving from the task are appended here. */
  reports: FeatureReport[];
  total: number | null;
  /** No feature progress (split, merge): only dismissal and shutdown are watched. */
  quiet?: boolean;
}

type TaskRun = { outcome: "done"; result: PipelineResult } | { outcome: "dismissed" | "stopped" };

/** `runTask` for a task writing into `staging`: the folder goes if the task fails. */
async function runTaskInto(staging: string, ctx: RunContext, task: PipelineTask, watch: Watch): Promise<TaskRun> {
  try {
    return await runTask(ctx, task, watch);
  } catch (error) {
    await removeStored(staging);
    throw error;
  }
}

async function runTask(ctx: RunContext, task: PipelineTask, watch: Watch): Promise<TaskRun> {
  const control = ctx.control ?? newControl();
  const d = db();
  let dismissed = false;
  let warned = 0;
  let lastDone = -1;
  let ticking = false;
  const onReports = (batch: FeatureReport[]) => {
    for (const r of batch) {
      watch.reports.push(r);
      if (r.status === "error" || r.status === "skipped") {
        warned++;
        if (warned <= MAX_FEATURE_LOG_LINES) void watch.log.warn(`Feature ${r.index} ${r.status}: ${r.reason ?? "no reason given"}`, r.index).catch(() => undefined);
        else if (warned === MAX_FEATURE_LOG_LINES + 1) void watch.log.warn(`More features were ${r.status === "error" ? "in error" : "skipped"}; see the feature reports for all of them.`).catch(() => undefined);
      }
    }
  };
  const tick = async () => {
    if (ticking) return;
    ticking = true;
    try {
      const ids = [watch.job.id, ...(watch.parent ? [watch.parent.id] : [])];
      const rows = await d.query.jobs.findMany({ columns: { status: true }, where: inArray(schema.jobs.id, ids) });
      if (rows.some((r) => r.status === "dismissed")) {
        dismissed = true;
        requestStop(control);
        return;
      }
      const done = Atomics.load(control, CONTROL_DONE);
      if (!watch.quiet && done !== lastDone) {
        lastDone = done;
        const percent = watch.total ? Math.min(99, Math.floor((done / watch.total) * 100)) : 0;
        await d.update(schema.jobs).set({ progress: percent, featuresDone: done, updatedAt: new Date() }).where(eq(schema.jobs.id, watch.job.id));
        if (watch.parent) await updateParentProgress(watch.parent.id);
        await ctx.onProgress?.(percent);
      } else {
        await d.update(schema.jobs).set({ updatedAt: new Date() }).where(eq(schema.jobs.id, watch.job.id));
      }
    } catch {
      // Progress is best effort; the next tick tries again.
    } finally {
      ticking = false;
    }
  };
  const timer = setInterval(() => void tick(), TICK_MS);
  let result: PipelineResult;
  try {
    result = await (ctx.pool ? ctx.pool.run(task, control, onReports) : runInline(task, control, onReports));
  } catch (error) {
    if ((error as Error).name === "DatasetInputError" || (error as Error).name === "PipelineInputError") throw new PermanentJobError((error as Error).message, { cause: error });
    throw describeStorageError(error);
  } finally {
    clearInterval(timer);
    while (ticking) await new Promise((r) => setTimeout(r, 5));
  }
  if (result.stopped) {
    if (ctx.shuttingDown?.() && !dismissed) return { outcome: "stopped" };
    return { outcome: "dismissed" };
  }
  // A dismissal that came while the last features ran: nothing is published.
  const rows = await d.query.jobs.findMany({ columns: { status: true }, where: inArray(schema.jobs.id, [watch.job.id, ...(watch.parent ? [watch.parent.id] : [])]) });
  if (rows.some((r) => r.status === "dismissed")) return { outcome: "dismissed" };
  return { outcome: "done", result };
}

/** After a dismissal or a shutdown request: the attempt ends, nothing is published. */
async function finishEarly(job: JobRow, attempt: number, outcome: "dismissed" | "stopped", log: JobLog): Promise<RunOutcome> {
  const d = db();
  const now = new Date();
  if (outcome === "dismissed") {
    await d.update(schema.attempts).set({ status: "dismissed", finishedAt: now }).where(and(eq(schema.attempts.jobId, job.id), eq(schema.attempts.number, attempt)));
    await log.info("Dismissed: stopped between features; nothing was published.");
    return "dismissed";
  }
  const message = "The worker was shut down; stopped after the current feature and queued again.";
  await d.update(schema.attempts).set({ status: "failed", error: message, finishedAt: now }).where(and(eq(schema.attempts.jobId, job.id), eq(schema.attempts.number, attempt)));
  await d.update(schema.jobs).set({ status: "accepted", message, updatedAt: now }).where(and(eq(schema.jobs.id, job.id), sql`${schema.jobs.status} != 'dismissed'`));
  await log.warn(message);
  return "stopped";
}

// ---------------------------------------------------------------------------------------------
// Publishing

function finalOutput(job: JobRow, source: Source, attempt: number, dir: string) {
  const steps = job_steps(job);
  const tolerance = steps.find((s) => typeof s.params.tolerance === "number")?.params.tolerance as number | undefined;
  const metadata = {
    lissom: { job: job.id, attempt },
    source: { dataset: source.datasetName, version: source.version.version, file: source.version.fileName },
    steps,
    tolerance_m: tolerance ?? null,
    crs: source.crs,
    title: source.datasetName,
    caution: CAUTION,
  };
  return {
    kind: "final" as const,
    dir,
    baseName: `${safeName(source.datasetName ?? "output")}-v${source.version.version}-${steps.map((s) => s.step).join("-")}`,
    formats: outputFormats(job.inputs),
    metadata,
  };
}

type Tx = Parameters<Parameters<ReturnType<typeof db>["transaction"]>[0]>[0];

/**
 * Moves the staging folder to `outputs/<job>/attempt-<n>/` and records outputs, feature
 * reports (`recordReports`) and the `successful` status in one transaction. Earlier attempts'
 * files go only once the new output is recorded; on any failure the earlier outputs stay.
 */
async function publish(
  job: JobRow,
  attempt: number,
  staging: string,
  written: WrittenFile[],
  metadata: object,
  features: number,
  counts: string,
  recordReports: (tx: Tx) => Promise<unknown>,
  timing?: { elapsedMs: number; geometryMs: number },
): Promise<void> {
  const d = db();
  const relative = `outputs/${job.id}/attempt-${attempt}`;
  await placeStaging(staging, relative);
  const outputFiles = await Promise.all(written.map(async (w) => ({ ...w, size: (await stat(join(storagePath(relative), w.fileName))).size })));
  const previous = await d.query.outputs.findMany({ where: eq(schema.outputs.jobId, job.id) });
  const finished = new Date();
  const time = timing ? ` in ${seconds(timing.elapsedMs)}, ${geometry(timing.geometryMs, timing.elapsedMs)}` : "";
  const finishedLine = `Finished: ${plural(features, "feature")} (${counts})${time}; output ${outputFiles.map((f) => f.fileName).join(", ")}.`;
  try {
    await d.transaction(async (tx) => {
      await tx.delete(schema.featureReports).where(eq(schema.featureReports.jobId, job.id));
      await tx.delete(schema.outputs).where(eq(schema.outputs.jobId, job.id));
      await recordReports(tx);
      if (outputFiles.length) {
        await tx.insert(schema.outputs).values(
          outputFiles.map((f) => ({
            id: crypto.randomUUID(),
            jobId: job.id,
            format: f.format,
            fileName: f.fileName,
            mediaType: OUTPUT_MEDIA_TYPES[f.format],
            storagePath: `${relative}/${f.fileName}`,
            sizeBytes: f.size,
            metadata,
          })),
        );
      }
      await tx.update(schema.attempts).set({ status: "successful", finishedAt: finished }).where(and(eq(schema.attempts.jobId, job.id), eq(schema.attempts.number, attempt)));
      await tx
        .update(schema.jobs)
        .set({ status: "successful", progress: 100, featuresDone: features, featuresTotal: features, finishedAt: finished, updatedAt: finished, message: `${plural(features, "feature")}: ${counts}` })
        .where(and(eq(schema.jobs.id, job.id), sql`${schema.jobs.status} != 'dismissed'`));
      await jobLog(job.id, attempt, tx).info(finishedLine);
    });
  } catch (error) {
    await removeStored(relative);
    throw error;
  }
  for (const old of previous) {
    const oldDir = old.storagePath.split("/").slice(0, -1).join("/");
    if (oldDir !== relative) await removeStored(oldDir);
  }
}

async function insertReports(tx: Tx, jobId: string, reports: FeatureReport[]): Promise<void> {
  for (let i = 0; i < reports.length; i += 200) {
    await tx.insert(schema.featureReports).values(
      reports.slice(i, i + 200).map((r) => ({
        jobId,
        featureIndex: r.index,
        verticesIn: r.verticesIn,
        segmentsOut: r.segmentsOut,
        maxDeviation: finiteOr(r.maxDeviation),
        rmsDeviation: finiteOr(r.rmsDeviation),
        status: r.status,
        reason: r.reason ?? null,
      })),
    );
  }
}

// ---------------------------------------------------------------------------------------------
// Bookkeeping

async function loadJob(jobId: string): Promise<JobRow> {
  const job = await db().query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
  if (!job) throw new PermanentJobError(`Job ${jobId} does not exist.`);
  return job;
}

async function loadSource(job: JobRow): Promise<Source> {
  const d = db();
  const version = await d.query.datasetVersions.findFirst({ where: eq(schema.datasetVersions.id, job.datasetVersionId) });
  if (!version) throw new PermanentJobError(`The dataset version of job ${job.id} is gone.`);
  const dataset = await d.query.datasets.findFirst({ where: eq(schema.datasets.id, version.datasetId) });
  const summary = version.summary as { features?: number; vertices?: number; crs?: { code: string } };
  const inputDir = storagePath(version.storagePath);
  let names: string[];
  try {
    names = await readdir(inputDir);
  } catch (error) {
    throw describeStorageError(error);
  }
  return {
    version,
    datasetName: dataset?.name,
    crs: summary.crs?.code ?? "EPSG:4326",
    features: summary.features ?? null,
    vertices: summary.vertices ?? 0,
    inputFiles: names.map((name) => ({ name, path: join(inputDir, name) })),
  };
}

/**
 * Records attempt n+1 of a job as running. Attempts still marked running belonged to a worker
 * that died (its lock expired and the queue gave the entry to another): they are closed here.
 */
export async function beginAttempt(jobId: string): Promise<number> {
  const d = db();
  const rows = await d.query.attempts.findMany({ columns: { number: true, status: true }, where: eq(schema.attempts.jobId, jobId) });
  const number = rows.reduce((max, r) => Math.max(max, r.number), 0) + 1;
  const now = new Date();
  if (rows.some((r) => r.status === "running")) {
    await d
      .update(schema.attempts)
      .set({ status: "failed", error: "Abandoned: the worker running this attempt stopped without finishing it.", finishedAt: now })
      .where(and(eq(schema.attempts.jobId, jobId), eq(schema.attempts.status, "running")));
  }
  await d.insert(schema.attempts).values({ jobId, number, status: "running", startedAt: now });
  return number;
}

/** Features done by a fanned-out job = the sum over its chunks. */
async function updateParentProgress(parentId: string): Promise<void> {
  const c = sql.raw("c");
  await db().run(sql`
    update ${schema.jobs}
    set features_done = (select coalesce(sum(${c}.features_done), 0) from ${schema.jobs} ${c} where ${c}.parent_id = ${parentId}),
        progress = case when coalesce(features_total, 0) = 0 then 0
                        else min(99, (select coalesce(sum(${c}.features_done), 0) from ${schema.jobs} ${c} where ${c}.parent_id = ${parentId}) * 100 / features_total) end,
        updated_at = ${Date.now()}
    where id = ${parentId} and status not in ('successful', 'dismissed', 'failed')`);
}

async function storage<T>(fn: () => Promise<T>): Promise<T> {
  try {
    return await fn();
  } catch (error) {
    // Some failures on a read-only or full file system surface as another code (a recursive
    // mkdir answers ENOENT); the storage folder itself then says what is wrong.
    const code = (error as { code?: unknown } | null)?.code;
    if (typeof code !== "string" || !STORAGE_ERROR_CODES.has(code)) {
      try {
        await access(storageRoot(), constants.W_OK);
      } catch (rootError) {
        throw describeStorageError(rootError);
      }
    }
    throw describeStorageError(error);
  }
}

function prefixedLog(log: JobLog, prefix: string): JobLog {
  return {
    debug: (m, f) => log.debug(prefix + m, f),
    info: (m, f) => log.info(prefix + m, f),
    warn: (m, f) => log.warn(prefix + m, f),
    error: (m, f) => log.error(prefix + m, f),
  };
}

function job_steps(job: JobRow): StepSpec[] {
  return job.steps as StepSpec[];
}

function countStatuses(reports: FeatureReport[]): string {
  const counts = new Map<string, number>();
  for (const r of reports) counts.set(r.status, (counts.get(r.status) ?? 0) + 1);
  return [...counts].map(([k, v]) => `${v} ${k}`).join(", ") || "none";
}

const ALL_FORMATS = Object.keys(OUTPUT_EXTENSIONS) as OutputFormat[];

/** The output formats a job asked for (its `formats` input), GeoJSON when it named none. */
function outputFormats(inputs: unknown): OutputFormat[] {
  const asked = (inputs as { formats?: unknown } | null)?.formats;
  const valid = Array.isArray(asked) ? asked.filter((f): f is OutputFormat => ALL_FORMATS.includes(f as OutputFormat)) : [];
  return valid.length ? [...new Set(valid)] : ["geojson"];
}

function plural(n: number, word: string): string {
  return `${n.toLocaleString("en-GB")} ${word}${n === 1 ? "" : "s"}`;
}

function seconds(ms: number): string {
  return `${(ms / 1000).toFixed(1)} s`;
}

/** "geometry 4.91 s (94 %)": time inside the step functions, of the task's time. */
function geometry(geometryMs: number, elapsedMs: number): string {
  return `geometry ${(geometryMs / 1000).toFixed(2)} s (${elapsedMs > 0 ? Math.round((100 * geometryMs) / elapsedMs) : 0} %)`;
}

function finiteOr(value: number): number {
  return Number.isFinite(value) ? value : -1;
}

function safeName(name: string): string {
  return name.replace(/[^\w.-]+/g, "-").replace(/^-+|-+$/g, "").slice(0, 60) || "output";
}

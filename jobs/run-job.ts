import { readdir, stat } from "node:fs/promises";
import { join } from "node:path";
import { and, eq, sql } from "drizzle-orm";
import { db, schema } from "../app/.server/db/client.server";
import { commitStagingDir, makeStagingDir, removeStored, storagePath } from "../app/.server/storage.server";
import { OUTPUT_EXTENSIONS, OUTPUT_MEDIA_TYPES, readFeatures, writeOutput, type OutputFormat } from "../app/formats";
import { broadcast } from "./broadcast";
import { jobLog } from "./job-log";
import { runFeatureStep, type FeatureReport, type StepName } from "./steps";

export interface StepSpec {
  step: StepName;
  params: Record<string, unknown>;
}

export interface RunContext {
  /** 1 for the first try; BullMQ's retries and an operator's retries count up. */
  attempt: number;
  /** Called with 0–100 as features finish. */
  onProgress?: (percent: number) => Promise<void> | void;
}

export type RunOutcome = "successful" | "dismissed";

/** Input that no retry can fix (a missing dataset, an unknown step): the job fails at once. */
export class PermanentJobError extends Error {}

const PROGRESS_INTERVAL_MS = 250;

/**
 * Runs one attempt of a job: streams the dataset version's features through the job's steps,
 * writes the output to a staging folder and, only when every feature is done, moves it into
 * place and records outputs, feature reports and the final status in one transaction. A rerun
 * starts from scratch, so an attempt that died half-way leaves nothing behind that counts.
 */
export async function runJob(jobId: string, ctx: RunContext): Promise<RunOutcome> {
  const d = db();
  const job = await d.query.jobs.findFirst({ where: eq(schema.jobs.id, jobId) });
  if (!job) throw new PermanentJobError(`Job ${jobId} does not exist.`);
  if (job.status === "dismissed") return "dismissed";
  const version = await d.query.datasetVersions.findFirst({ where: eq(schema.datasetVersions.id, job.datasetVersionId) });
  if (!version) throw new PermanentJobError(`The dataset version of job ${jobId} is gone.`);
  const dataset = await d.query.datasets.findFirst({ where: eq(schema.datasets.id, version.datasetId) });

  const log = jobLog(jobId, ctx.attempt);
  const steps = job.steps as StepSpec[];
  const summary = version.summary as { features?: number; crs?: { code: string; wkt?: string } };
  const featuresTotal = summary.features ?? null;
  const started = new Date();

  await d
    .insert(schema.attempts)
    .values({ jobId, number: ctx.attempt, status: "running", startedAt: started })
    .onConflictDoUpdate({
      target: [schema.attempts.jobId, schema.attempts.number],
      set: { status: "running", startedAt: started, finishedAt: null, error: null },
    });
  await d
    .update(schema.jobs)
    .set({ status: "running", startedAt: job.startedAt ?? started, progress: 0, featuresDone: 0, featuresTotal, message: null, updatedAt: started })
    .where(eq(schema.jobs.id, jobId));
  await log.info(`Attempt ${ctx.attempt} started: ${steps.map((s) => s.step).join(" → ")} on ${dataset?.name ?? "dataset"} v${version.version} (${featuresTotal ?? "?"} features).`);

  const inputDir = storagePath(version.storagePath);
  const inputFiles = (await readdir(inputDir)).map((name) => ({ name, path: join(inputDir, name) }));
  const crs = { code: summary.crs?.code ?? "EPSG:4326" };
  const reports: FeatureReport[] = [];
  let done = 0;
  let lastTick = 0;
  let dismissed = false;

  async function checkDismissed(): Promise<boolean> {
    const row = await d.query.jobs.findFirst({ columns: { status: true }, where: eq(schema.jobs.id, jobId) });
    return row?.status === "dismissed";
  }

  const wantsInputLayer = outputFormats(job.inputs).includes("svg");
  async function* processed() {
    for await (const { index, feature } of readFeatures(inputFiles, { crs: crs.code })) {
      let current: object = feature;
      let report: FeatureReport | undefined;
      for (const spec of steps) {
        const result = runFeatureStep(spec.step, spec.params as never, current as never, index, crs);
        current = result.feature;
        // The feature's figures are those of the step that changed the geometry most: fit if
        // present, else the last step.
        if (!report || spec.step === "fit") report = result.report;
        if (result.report.status === "error" || result.report.status === "skipped") {
          report = result.report;
          break;
        }
      }
      if (report) {
        reports.push(report);
        if (report.status === "error" || report.status === "skipped") {
          await log.warn(`Feature ${index} ${report.status}: ${report.reason ?? "no reason given"}`, index);
        }
      }
      done++;
      const now = Date.now();
      if (now - lastTick >= PROGRESS_INTERVAL_MS) {
        lastTick = now;
        if (await checkDismissed()) {
          dismissed = true;
          return;
        }
        const percent = featuresTotal ? Math.min(99, Math.floor((done / featuresTotal) * 100)) : 0;
        await d.update(schema.jobs).set({ progress: percent, featuresDone: done, updatedAt: new Date() }).where(eq(schema.jobs.id, jobId));
        await ctx.onProgress?.(percent);
      }
      // The SVG writer draws the input beside the result; other writers leave this member out.
      if (wantsInputLayer) (current as { inputGeometry?: unknown }).inputGeometry = feature.geometry;
      yield current;
    }
  }

  const staging = await makeStagingDir();
  const baseName = `${safeName(dataset?.name ?? "output")}-v${version.version}-${steps.map((s) => s.step).join("-")}`;
  const formats = outputFormats(job.inputs);
  const tolerance = steps.find((s) => typeof s.params.tolerance === "number")?.params.tolerance as number | undefined;
  const metadata = {
    lissom: { job: jobId, attempt: ctx.attempt },
    source: { dataset: dataset?.name, version: version.version, file: version.fileName },
    steps,
    tolerance_m: tolerance ?? null,
    crs: crs.code,
    ...(summary.crs?.wkt ? { crsWkt: summary.crs.wkt } : {}),
    title: dataset?.name,
    caution:
      "Approximation within the stated tolerance. Not for legal boundary definition or for locating buried utilities; defer to local survey codes and licensed surveyors.",
  };
  // The steps run once; every requested format is written from that one stream, so all
  // formats of a job hold the same curves.
  const written = formats.map((format) => ({ format, fileName: `${baseName}${OUTPUT_EXTENSIONS[format]}` }));
  const streams = broadcast(processed(), formats.length);
  const results = await Promise.allSettled(written.map((w, i) => writeOutput(w.format, streams[i]!, join(staging, w.fileName), metadata)));
  const failed = results.find((r): r is PromiseRejectedResult => r.status === "rejected");
  if (failed) {
    await removeStored(staging);
    throw failed.reason;
  }
  if (dismissed || (await checkDismissed())) {
    await removeStored(staging);
    await log.info("Dismissed: stopped between features; nothing was published.");
    await d.update(schema.attempts).set({ status: "dismissed", finishedAt: new Date() }).where(and(eq(schema.attempts.jobId, jobId), eq(schema.attempts.number, ctx.attempt)));
    return "dismissed";
  }

  const relative = `outputs/${jobId}/attempt-${ctx.attempt}`;
  await removeStored(relative);
  await commitStagingDir(staging, relative);
  const outputFiles = await Promise.all(
    written.map(async (w) => ({ ...w, size: (await stat(join(storagePath(relative), w.fileName))).size })),
  );
  const previous = await d.query.outputs.findMany({ where: eq(schema.outputs.jobId, jobId) });
  const finished = new Date();
  const counts = countStatuses(reports);
  try {
    await d.transaction(async (tx) => {
      await tx.delete(schema.featureReports).where(eq(schema.featureReports.jobId, jobId));
      await tx.delete(schema.outputs).where(eq(schema.outputs.jobId, jobId));
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
      await tx.insert(schema.outputs).values(
        outputFiles.map((f) => ({
          id: crypto.randomUUID(),
          jobId,
          format: f.format,
          fileName: f.fileName,
          mediaType: OUTPUT_MEDIA_TYPES[f.format],
          storagePath: `${relative}/${f.fileName}`,
          sizeBytes: f.size,
          metadata,
        })),
      );
      await tx.update(schema.attempts).set({ status: "successful", finishedAt: finished }).where(and(eq(schema.attempts.jobId, jobId), eq(schema.attempts.number, ctx.attempt)));
      await tx
        .update(schema.jobs)
        .set({
          status: "successful",
          progress: 100,
          featuresDone: done,
          featuresTotal: done,
          finishedAt: finished,
          updatedAt: finished,
          message: `${plural(done, "feature")}: ${counts}`,
        })
        .where(and(eq(schema.jobs.id, jobId), sql`${schema.jobs.status} != 'dismissed'`));
    });
  } catch (error) {
    await removeStored(relative);
    throw error;
  }
  // Earlier attempts' files are removed only once the new output is recorded.
  for (const old of previous) {
    const oldDir = old.storagePath.split("/").slice(0, -1).join("/");
    if (oldDir !== relative) await removeStored(oldDir);
  }
  await ctx.onProgress?.(100);
  await log.info(`Finished: ${plural(done, "feature")} (${counts}); output ${outputFiles.map((f) => f.fileName).join(", ")}.`);
  return "successful";
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

function finiteOr(value: number): number {
  return Number.isFinite(value) ? value : -1;
}

function safeName(name: string): string {
  return name.replace(/[^\w.-]+/g, "-").replace(/^-+|-+$/g, "").slice(0, 60) || "output";
}

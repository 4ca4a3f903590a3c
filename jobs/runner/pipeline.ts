/**
 * The file and geometry work of a job, with no database and no queue: read features, run the
 * steps on each, write the outputs. It runs inside a worker thread (thread-main.ts), so the
 * worker's event loop stays free for BullMQ's lock renewal and the database while fitting
 * keeps a core busy; it can also run inline (tests, benchmarks).
 *
 * Three tasks:
 * - `process`: features (from the dataset's files, or from a chunk's input file) through the
 *   steps, into either the job's final outputs or a chunk's output file;
 * - `split`: one pass over a large dataset that writes its features into chunk input files of
 *   about `chunkVertices` vertices each (whole features, input order kept);
 * - `merge`: the chunks' output files, in chunk order, into the final outputs. The final
 *   outputs are written by the same function from the same stream of features as in an
 *   unchunked run, so both give the same files.
 *
 * Chunk files are newline-delimited JSON, one `{"i": <input index>, "f": <feature>}` per line
 * (a private format: the input index travels with the feature). JSON keeps every finite
 * number exactly (ECMA-262 Number::toString gives the shortest string that reads back to the
 * same double), so a feature comes back from a chunk file as it went in.
 *
 * Control: a shared Int32Array; slot 0 set to 1 asks the task to stop before its next feature
 * (dismissal, worker shutdown); slot 1 counts features done, for progress.
 */
import { once } from "node:events";
import { createReadStream, createWriteStream } from "node:fs";
import { mkdir, rename, rm } from "node:fs/promises";
import { join } from "node:path";
import { createInterface } from "node:readline";
import { describeCrs } from "../../app/geometry/crs";
import { OUTPUT_EXTENSIONS, keepInputGeometry, readFeatures, wantsInputLayer, writeOutput, type OutputFormat } from "../../app/formats";
import { broadcast } from "../broadcast";
import { runFeatureStep, type FeatureReport } from "../steps";

export interface StepSpec {
  step: string;
  params: Record<string, unknown>;
}

export interface InputFileRef {
  path: string;
  name: string;
}

/** The dataset's own files, or a chunk input file written by `split`. */
export type PipelineInput = { files: InputFileRef[]; crs: string } | { chunkFile: string; crs: string };

export interface FinalOutputSpec {
  kind: "final";
  /** Folder the output files are written into (a staging folder). */
  dir: string;
  baseName: string;
  formats: OutputFormat[];
  metadata: Record<string, unknown>;
}

export interface ChunkOutputSpec {
  kind: "chunk";
  /** The chunk output file (NDJSON of `{i, f}` lines). */
  path: string;
  /** Keep each feature's input geometry beside the result, for an SVG output's input layer. */
  inputLayer?: boolean;
}

export type PipelineTask =
  | { kind: "process"; input: PipelineInput; steps: StepSpec[]; output: FinalOutputSpec | ChunkOutputSpec; stepsModule?: string }
  | { kind: "split"; input: { files: InputFileRef[]; crs: string }; dir: string; chunkVertices: number }
  | { kind: "merge"; chunkFiles: string[]; output: FinalOutputSpec };

export interface WrittenFile {
  format: OutputFormat;
  fileName: string;
}

export interface ProcessResult {
  kind: "process";
  stopped: boolean;
  features: number;
  /** Time spent inside the step functions (the geometry), and in the whole task. */
  geometryMs: number;
  elapsedMs: number;
  written: WrittenFile[];
}

export interface ChunkPlan {
  index: number;
  /** Input feature indexes [start, end); the next chunk starts at `end`. */
  start: number;
  end: number;
  features: number;
  vertices: number;
  file: string;
}

export interface SplitResult {
  kind: "split";
  stopped: boolean;
  chunks: ChunkPlan[];
  elapsedMs: number;
}

export interface MergeResult {
  kind: "merge";
  stopped: boolean;
  features: number;
  elapsedMs: number;
  written: WrittenFile[];
}

export type PipelineResult = ProcessResult | SplitResult | MergeResult;

export interface PipelineHooks {
  /** Feature reports, in input order, in batches. */
  onReports?: (reports: FeatureReport[]) => void;
}

export const CONTROL_STOP = 0;
export const CONTROL_DONE = 1;

export function newControl(): Int32Array {
  return new Int32Array(new SharedArrayBuffer(2 * Int32Array.BYTES_PER_ELEMENT));
}

/** Input that no retry can fix: an unknown step or CRS, bad step parameters. */
export class PipelineInputError extends Error {
  override name = "PipelineInputError";
}

class Stopped extends Error {
  override name = "Stopped";
}

type StepFunction = (step: never, params: never, feature: unknown, index: number, crs: { code: string }) => { feature: object; report: FeatureReport };

const REPORT_BATCH = 500;

export async function runPipelineTask(task: PipelineTask, control: Int32Array, hooks: PipelineHooks = {}): Promise<PipelineResult> {
  if (task.kind === "process") return processTask(task, control, hooks);
  if (task.kind === "split") return splitTask(task, control);
  return mergeTask(task, control);
}

async function loadSteps(stepsModule?: string): Promise<StepFunction> {
  if (!stepsModule) return runFeatureStep as StepFunction;
  // Another step runner with the same signature (tests use one that fails on purpose).
  const mod = (await import(/* @vite-ignore */ stepsModule)) as { runFeatureStep?: StepFunction };
  if (typeof mod.runFeatureStep !== "function") throw new Error(`${stepsModule} has no runFeatureStep function`);
  return mod.runFeatureStep;
}

/**
 * Checks once, before any feature, what would otherwise fail on every feature: the CRS is
 * known, and each step runs on a two-vertex line with its parameters without throwing.
 */
function preflight(run: StepFunction, steps: StepSpec[], crs: string): void {
  try {
    describeCrs(crs);
  } catch (error) {
    throw new PipelineInputError(`The dataset's CRS cannot be used: ${messageOf(error)}`);
  }
  const probe = { type: "Feature", properties: {}, geometry: { type: "LineString", coordinates: [[0, 0], [0.0001, 0.0001]] } };
  let current: object = probe;
  for (const spec of steps) {
    try {
      current = run(spec.step as never, spec.params as never, current, -1, { code: crs }).feature;
    } catch (error) {
      throw new PipelineInputError(`Step "${spec.step}" cannot run with these parameters: ${messageOf(error)}`);
    }
  }
}

interface IndexedFeature {
  index: number;
  feature: object;
}

async function* readInput(input: PipelineInput): AsyncGenerator<IndexedFeature> {
  if ("files" in input) {
    for await (const item of readFeatures(input.files, { crs: input.crs })) yield { index: item.index, feature: item.feature };
  } else {
    yield* readChunkFile(input.chunkFile);
  }
}

export async function* readChunkFile(path: string): AsyncGenerator<IndexedFeature> {
  const lines = createInterface({ input: createReadStream(path, { encoding: "utf8" }), crlfDelay: Infinity });
  for await (const line of lines) {
    if (line === "") continue;
    const { i, f } = JSON.parse(line) as { i: number; f: object };
    yield { index: i, feature: f };
  }
}

/** Writes `{i, f}` lines to `path` (through a `.part` file renamed at the end). */
async function writeChunkFile(items: AsyncIterable<IndexedFeature>, path: string): Promise<number> {
  const part = `${path}.part`;
  const out = createWriteStream(part, { encoding: "utf8" });
  const failed = new Promise<never>((_, reject) => out.once("error", reject));
  failed.catch(() => undefined);
  let n = 0;
  try {
    for await (const { index, feature } of items) {
      const ok = out.write(`${JSON.stringify({ i: index, f: feature })}\n`);
      n++;
      if (!ok) await Promise.race([once(out, "drain"), failed]);
    }
    out.end();
    await Promise.race([once(out, "finish"), failed]);
  } catch (error) {
    out.destroy();
    await rm(part, { force: true });
    throw error;
  }
  await rename(part, path);
  return n;
}

function checkStop(control: Int32Array): void {
  if (Atomics.load(control, CONTROL_STOP) !== 0) throw new Stopped("stopped on request");
}

/** Runs the steps on one feature: the report of `fit` if present, else of the last step. */
export function runSteps(run: StepFunction, steps: StepSpec[], feature: object, index: number, crs: string): { feature: object; report: FeatureReport } {
  let current = feature;
  let report: FeatureReport | undefined;
  for (const spec of steps) {
    let result: { feature: object; report: FeatureReport };
    try {
      result = run(spec.step as never, spec.params as never, current, index, { code: crs });
    } catch (error) {
      // A step that throws on one feature: that feature is reported and passed through as it
      // was before the step; the others go on (a fault of one feature is not retried).
      report = {
        index,
        verticesIn: countVertices((feature as { geometry?: unknown }).geometry),
        segmentsOut: 0,
        maxDeviation: Number.NaN,
        rmsDeviation: Number.NaN,
        status: "error",
        reason: `step ${spec.step} failed on this feature: ${messageOf(error)}`,
      };
      break;
    }
    current = result.feature;
    if (!report || spec.step === "fit") report = result.report;
    if (result.report.status === "error" || result.report.status === "skipped") {
      report = result.report;
      break;
    }
  }
  return { feature: current, report: report ?? { index, verticesIn: 0, segmentsOut: 0, maxDeviation: 0, rmsDeviation: 0, status: "ok" } };
}

async function processTask(task: Extract<PipelineTask, { kind: "process" }>, control: Int32Array, hooks: PipelineHooks): Promise<ProcessResult> {
  const started = performance.now();
  const run = await loadSteps(task.stepsModule);
  const crs = task.input.crs;
  preflight(run, task.steps, crs);
  let geometryMs = 0;
  let done = 0;
  let batch: FeatureReport[] = [];
  const flush = () => {
    if (batch.length) hooks.onReports?.(batch);
    batch = [];
  };
  const inputLayer = task.output.kind === "final" ? wantsInputLayer(task.output.formats) : Boolean(task.output.inputLayer);
  async function* processed(): AsyncGenerator<IndexedFeature> {
    for await (const { index, feature } of readInput(task.input)) {
      checkStop(control);
      const t0 = performance.now();
      const result = runSteps(run, task.steps, feature, index, crs);
      geometryMs += performance.now() - t0;
      if (inputLayer) keepInputGeometry(result.feature, feature);
      batch.push(result.report);
      if (batch.length >= REPORT_BATCH) flush();
      done++;
      Atomics.store(control, CONTROL_DONE, done);
      yield { index, feature: result.feature };
    }
    flush();
  }
  try {
    let written: WrittenFile[] = [];
    if (task.output.kind === "chunk") await writeChunkFile(processed(), task.output.path);
    else written = await writeFinal(featuresOf(processed()), task.output, control);
    return { kind: "process", stopped: false, features: done, geometryMs, elapsedMs: performance.now() - started, written };
  } catch (error) {
    if (error instanceof Stopped) return { kind: "process", stopped: true, features: done, geometryMs, elapsedMs: performance.now() - started, written: [] };
    throw error;
  }
}

async function* featuresOf(items: AsyncIterable<IndexedFeature>): AsyncGenerator<object> {
  for await (const { feature } of items) yield feature;
}

/**
 * The job's output files: every asked-for format written from the one stream of processed
 * features (a broadcast with backpressure), so all formats of one job hold the same curves and
 * nothing is read back.
 */
async function writeFinal(features: AsyncIterable<object>, output: FinalOutputSpec, control: Int32Array): Promise<WrittenFile[]> {
  const written = output.formats.map((format) => ({ format, fileName: `${output.baseName}${OUTPUT_EXTENSIONS[format]}` }));
  const streams = broadcast(stopping(features, control), written.length);
  const results = await Promise.allSettled(written.map((w, i) => writeOutput(w.format, streams[i]!, join(output.dir, w.fileName), output.metadata)));
  const failed = results.find((r): r is PromiseRejectedResult => r.status === "rejected");
  if (failed) throw failed.reason;
  return written;
}

async function* stopping(features: AsyncIterable<object>, control: Int32Array): AsyncGenerator<object> {
  for await (const f of features) {
    checkStop(control);
    yield f;
  }
}

async function splitTask(task: Extract<PipelineTask, { kind: "split" }>, control: Int32Array): Promise<SplitResult> {
  const started = performance.now();
  await mkdir(task.dir, { recursive: true });
  const chunks: ChunkPlan[] = [];
  const iterator = readInput(task.input)[Symbol.asyncIterator]();
  let pending: IteratorResult<IndexedFeature> = await iterator.next();
  let done = 0;
  try {
    while (!pending.done) {
      const index = chunks.length;
      const file = join(task.dir, `chunk-${index}.ndjson`);
      const plan: ChunkPlan = { index, start: chunks.length ? chunks[chunks.length - 1]!.end : 0, end: 0, features: 0, vertices: 0, file };
      // One chunk: whole features until it holds at least `chunkVertices` vertices.
      async function* fill(): AsyncGenerator<IndexedFeature> {
        while (!pending.done) {
          checkStop(control);
          const item = pending.value;
          plan.vertices += countVertices((item.feature as { geometry?: unknown }).geometry);
          plan.features++;
          plan.end = item.index + 1;
          done++;
          Atomics.store(control, CONTROL_DONE, done);
          yield item;
          pending = await iterator.next();
          if (plan.vertices >= task.chunkVertices) return;
        }
      }
      await writeChunkFile(fill(), file);
      chunks.push(plan);
    }
  } catch (error) {
    await iterator.return?.(undefined);
    if (error instanceof Stopped) return { kind: "split", stopped: true, chunks: [], elapsedMs: performance.now() - started };
    throw error;
  }
  return { kind: "split", stopped: false, chunks, elapsedMs: performance.now() - started };
}

async function mergeTask(task: Extract<PipelineTask, { kind: "merge" }>, control: Int32Array): Promise<MergeResult> {
  const started = performance.now();
  let done = 0;
  async function* all(): AsyncGenerator<object> {
    for (const file of task.chunkFiles) {
      for await (const { feature } of readChunkFile(file)) {
        checkStop(control);
        done++;
        Atomics.store(control, CONTROL_DONE, done);
        yield feature;
      }
    }
  }
  try {
    const written = await writeFinal(all(), task.output, control);
    return { kind: "merge", stopped: false, features: done, elapsedMs: performance.now() - started, written };
  } catch (error) {
    if (error instanceof Stopped) return { kind: "merge", stopped: true, features: done, elapsedMs: performance.now() - started, written: [] };
    throw error;
  }
}

/** Positions in a line or polygon geometry (0 for anything else). */
export function countVertices(geometry: unknown): number {
  const g = geometry as { type?: string; coordinates?: unknown } | null | undefined;
  if (!g || !Array.isArray(g.coordinates)) return 0;
  const depth = g.type === "LineString" ? 1 : g.type === "MultiLineString" || g.type === "Polygon" ? 2 : g.type === "MultiPolygon" ? 3 : 0;
  const count = (v: unknown, d: number): number => (!Array.isArray(v) ? 0 : d === 1 ? v.length : v.reduce((s: number, x) => s + count(x, d - 1), 0));
  return depth ? count(g.coordinates, depth) : 0;
}

function messageOf(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}

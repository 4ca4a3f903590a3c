import { readdir } from "node:fs/promises";
import { join } from "node:path";
import { asc, desc, eq, max } from "drizzle-orm";
import { z } from "zod";
import { DEFAULT_CORNER_ANGLE } from "../geometry/fit";
import { readFeatures } from "../formats";
import { QueueUnavailableError } from "../../jobs/queue";
import { runFeatureStep, type FeatureReport, type StepName } from "../../jobs/steps";
import { getDataset, listDatasets } from "./datasets.server";
import { db, schema } from "./db/client.server";
import { submitJob, type JobRow } from "./jobs.server";
import { OUTPUT_FORMAT_LABELS, OUTPUT_FORMATS } from "./processes.server";
import { storagePath } from "./storage.server";

/**
 * Job definitions: a named, versioned list of steps with their parameters, the output formats
 * to write and the retry defaults. Rows are never edited: saving changes makes a new row with
 * the next version number under the same name, and every job records the exact row it ran.
 */

export type DefinitionRow = typeof schema.definitions.$inferSelect;
export type OutputFormatId = (typeof OUTPUT_FORMATS)[number];

export const STEP_NAMES = ["fit", "elevate", "discretise"] as const satisfies readonly StepName[];
export const MAX_STEPS = 8;
export const DEFINITION_NAME_PATTERN = /^[\p{L}\p{N}][\p{L}\p{N} ._-]{0,79}$/u;

/** Plain words for each step and its parameters, for the console's editor and the API. */
export const STEP_GUIDE = {
  fit: {
    title: "Fit curves",
    summary: "Fits piecewise cubic Bézier curves within a tolerance on the ground, keeping true corners.",
    params: {
      tolerance: { label: "Tolerance (m)", help: "Largest distance on the ground between the input and the curves, both ways.", required: true },
      cornerAngle: { label: "Corner angle (°)", help: `Turns sharper than this stay corners; default ${DEFAULT_CORNER_ANGLE}°.`, required: false },
      geometryTolerance: { label: "Line tolerance (m)", help: "Tolerance of the polyline written beside the curves; default a tenth of the tolerance.", required: false },
    },
  },
  elevate: {
    title: "Raise degree",
    summary: "Raises every Bézier segment to the given degree, exactly; segments above it are reduced and the deviation reported.",
    params: {
      degree: { label: "Degree", help: "Degree of every segment afterwards (3 = cubic).", required: true },
      geometryTolerance: { label: "Line tolerance (m)", help: "Tolerance of the polyline when a segment had to be reduced; default 0.1 m.", required: false },
    },
  },
  discretise: {
    title: "Back to lines",
    summary: "Turns the curves back into polylines that stay within the tolerance.",
    params: {
      tolerance: { label: "Tolerance (m)", help: "Largest distance on the ground between the curve and the polyline.", required: true },
    },
  },
} as const satisfies Record<(typeof STEP_NAMES)[number], { title: string; summary: string; params: Record<string, { label: string; help: string; required: boolean }> }>;

const metres = z
  .number({ error: "must be a number of metres" })
  .finite("must be a finite number of metres")
  .positive("must be a positive number of metres")
  .max(100_000, "must be at most 100 km");

const FitParams = z.strictObject(
  {
    tolerance: metres,
    cornerAngle: z.number({ error: "must be a number of degrees" }).min(0, "must be at least 0°").max(180, "must be at most 180°").optional(),
    geometryTolerance: metres.optional(),
  },
  { error: (issue) => (issue.code === "unrecognized_keys" ? `unknown parameter ${issue.keys.join(", ")}; fit takes tolerance, cornerAngle, geometryTolerance` : "must be an object of parameters") },
);
const ElevateParams = z.strictObject(
  {
    degree: z.number({ error: "must be a whole number" }).int("must be a whole number").min(1, "must be at least 1").max(12, "must be at most 12"),
    geometryTolerance: metres.optional(),
  },
  { error: (issue) => (issue.code === "unrecognized_keys" ? `unknown parameter ${issue.keys.join(", ")}; elevate takes degree, geometryTolerance` : "must be an object of parameters") },
);
const DiscretiseParams = z.strictObject(
  { tolerance: metres },
  { error: (issue) => (issue.code === "unrecognized_keys" ? `unknown parameter ${issue.keys.join(", ")}; discretise takes tolerance` : "must be an object of parameters") },
);

export const StepInput = z.discriminatedUnion(
  "step",
  [
    z.object({ step: z.literal("fit"), params: FitParams }),
    z.object({ step: z.literal("elevate"), params: ElevateParams }),
    z.object({ step: z.literal("discretise"), params: DiscretiseParams }),
  ],
  { error: `is not a step; choose one of ${STEP_NAMES.join(", ")}` },
);
export type StepInput = z.infer<typeof StepInput>;

const StepList = z
  .array(StepInput, { error: "must be a list of steps" })
  .min(1, "name at least one step")
  .max(MAX_STEPS, `at most ${MAX_STEPS} steps`);

/** What a person writes: everything but the name is the same for a new definition and a new version. */
export const DefinitionInput = z.object({
  name: z
    .string({ error: "must be text" })
    .trim()
    .regex(DEFINITION_NAME_PATTERN, "must start with a letter or digit and hold at most 80 letters, digits, spaces, dots, dashes or underscores"),
  description: z.string({ error: "must be text" }).trim().max(2000, "must be at most 2,000 characters").optional(),
  steps: StepList,
  formats: z
    .array(z.enum(OUTPUT_FORMATS, { error: `must be one of ${OUTPUT_FORMATS.join(", ")}` }), { error: "must be a list of output formats" })
    .min(1, "name at least one output format")
    .default(["geojson"]),
  maxAttempts: z.number({ error: "must be a whole number" }).int("must be a whole number").min(1, "must be at least 1").max(10, "must be at most 10").default(3),
  backoffMs: z
    .number({ error: "must be a whole number of milliseconds" })
    .int("must be a whole number of milliseconds")
    .min(0, "must not be negative")
    .max(3_600_000, "must be at most one hour")
    .default(2000),
});
export type DefinitionInput = z.infer<typeof DefinitionInput>;

export interface FieldIssue {
  /** Path of the field, e.g. `steps.1.params.tolerance`. */
  field: string;
  /** A sentence naming the step (number and name) and the field. */
  message: string;
}

/**
 * zod issues as sentences a person can act on: `Step 2 (discretise), tolerance: must be a
 * positive number of metres`. `raw` is the input as given, to name the step of each issue.
 */
export function describeDefinitionIssues(error: z.ZodError, raw: unknown): FieldIssue[] {
  const rawSteps = (raw as { steps?: unknown } | null)?.steps;
  return error.issues.map((issue) => {
    const path = issue.path.map(String);
    const field = path.join(".") || "(body)";
    if (path[0] === "steps" && path.length >= 2) {
      const i = Number(path[1]);
      const name = Array.isArray(rawSteps) ? (rawSteps[i] as { step?: unknown } | undefined)?.step : undefined;
      const label = typeof name === "string" && (STEP_NAMES as readonly string[]).includes(name) ? `Step ${i + 1} (${name})` : `Step ${i + 1}`;
      if (path[2] === "step" || path.length === 2) {
        const shown = typeof name === "string" ? `"${name}" ` : "";
        return { field, message: `${label}: ${shown}${issue.message}` };
      }
      const param = path.slice(3).join(".");
      return { field, message: param ? `${label}, ${param}: ${issue.message}` : `${label}, parameters: ${issue.message}` };
    }
    const label = { name: "Name", description: "Description", steps: "Steps", formats: "Output formats", maxAttempts: "Attempts", backoffMs: "Retry delay" }[path[0] ?? ""] ?? field;
    return { field, message: `${label}: ${issue.message}` };
  });
}

export type ParseOutcome<T> = { ok: true; data: T } | { ok: false; issues: FieldIssue[]; message: string };

export function parseDefinition(raw: unknown): ParseOutcome<DefinitionInput> {
  const parsed = DefinitionInput.safeParse(raw);
  if (parsed.success) return { ok: true, data: parsed.data };
  const issues = describeDefinitionIssues(parsed.error, raw);
  return { ok: false, issues, message: issues.map((i) => i.message).join("; ") };
}

/** Only the steps, for a preview before the rest of the form is filled in. */
export function parseSteps(raw: unknown): ParseOutcome<StepInput[]> {
  const parsed = StepList.safeParse(raw);
  if (parsed.success) return { ok: true, data: parsed.data };
  const issues = describeDefinitionIssues(new z.ZodError(parsed.error.issues.map((i) => ({ ...i, path: ["steps", ...i.path] }))), { steps: raw });
  return { ok: false, issues, message: issues.map((i) => i.message).join("; ") };
}

/**
 * The console's form fields as the definition's shape: `name`, `description`, `formats`
 * (repeated), `maxAttempts`, `backoffSeconds`, and per step `steps.<n>.step` plus
 * `steps.<n>.<param>`. Empty optional numbers are left out; text that is not a number stays
 * text so that the check names it.
 */
export function definitionFromForm(form: FormData): Record<string, unknown> {
  const steps: Record<string, unknown>[] = [];
  for (const [key, value] of form) {
    const m = /^steps\.(\d+)\.(\w+)$/.exec(key);
    if (!m || typeof value !== "string") continue;
    const i = Number(m[1]);
    if (i >= MAX_STEPS * 4) continue;
    steps[i] ??= { params: {} };
    const text = value.trim();
    if (m[2] === "step") steps[i]!.step = text;
    else if (text !== "") (steps[i]!.params as Record<string, unknown>)[m[2]!] = numberOrText(text);
  }
  const out: Record<string, unknown> = {
    name: String(form.get("name") ?? ""),
    steps: steps.filter(Boolean),
    formats: form.getAll("formats").map(String),
  };
  const description = String(form.get("description") ?? "").trim();
  if (description) out.description = description;
  const attempts = String(form.get("maxAttempts") ?? "").trim();
  if (attempts) out.maxAttempts = numberOrText(attempts);
  const backoff = String(form.get("backoffSeconds") ?? "").trim();
  if (backoff) {
    const n = numberOrText(backoff);
    out.backoffMs = typeof n === "number" ? Math.round(n * 1000) : n;
  }
  return out;
}

function numberOrText(text: string): number | string {
  const n = Number(text);
  return text !== "" && Number.isFinite(n) ? n : text;
}

export class DefinitionConflictError extends Error {}

/** Saves a new definition as version 1; a name already in use is refused (edit it instead). */
export async function createDefinition(input: DefinitionInput, userId: string | null): Promise<DefinitionRow> {
  const d = db();
  const existing = await d.query.definitions.findFirst({ columns: { id: true }, where: eq(schema.definitions.name, input.name) });
  if (existing) throw new DefinitionConflictError(`A definition named "${input.name}" exists already; edit it to make a new version, or choose another name.`);
  try {
    const [row] = await d.insert(schema.definitions).values(rowValues(input, input.name, 1, userId)).returning();
    return row!;
  } catch (error) {
    if (isUniqueViolation(error)) throw new DefinitionConflictError(`A definition named "${input.name}" was just saved by someone else; edit it to make a new version.`);
    throw error;
  }
}

/**
 * Saves changes as the next version under the name of `baseId` (any version of it). The name
 * itself cannot change: a new name is a new definition.
 */
export async function reviseDefinition(baseId: string, input: Omit<DefinitionInput, "name"> & { name?: string }, userId: string | null): Promise<DefinitionRow | null> {
  const d = db();
  const base = await d.query.definitions.findFirst({ where: eq(schema.definitions.id, baseId) });
  if (!base) return null;
  if (input.name !== undefined && input.name !== base.name) {
    throw new DefinitionConflictError(`Name: a definition keeps its name across versions ("${base.name}"); save under a new name as a new definition instead.`);
  }
  // Two people saving at once both read the same latest version; the unique (name, version)
  // index refuses the second insert, which then takes the next number.
  for (let tries = 0; tries < 5; tries++) {
    const [latest] = await d.select({ v: max(schema.definitions.version) }).from(schema.definitions).where(eq(schema.definitions.name, base.name));
    const version = (latest?.v ?? 0) + 1;
    try {
      const [row] = await d.insert(schema.definitions).values(rowValues(input, base.name, version, userId)).returning();
      return row!;
    } catch (error) {
      if (!isUniqueViolation(error)) throw error;
    }
  }
  throw new DefinitionConflictError(`Could not save a new version of "${base.name}": others kept saving at the same time. Try again.`);
}

function rowValues(input: Omit<DefinitionInput, "name">, name: string, version: number, userId: string | null) {
  return {
    id: crypto.randomUUID(),
    name,
    version,
    description: input.description || null,
    steps: input.steps,
    formats: input.formats,
    maxAttempts: input.maxAttempts,
    backoffMs: input.backoffMs,
    createdBy: userId,
  };
}

function isUniqueViolation(error: unknown): boolean {
  for (let e: unknown = error; e; e = (e as { cause?: unknown }).cause) {
    if (/UNIQUE constraint failed/i.test(String((e as { message?: unknown }).message ?? ""))) return true;
  }
  return false;
}

/** The latest version of every definition, by name. */
export async function listDefinitions() {
  const d = db();
  const rows = await d
    .select({ def: schema.definitions, author: schema.user.email })
    .from(schema.definitions)
    .leftJoin(schema.user, eq(schema.definitions.createdBy, schema.user.id))
    .orderBy(asc(schema.definitions.name), desc(schema.definitions.version));
  const latest = new Map<string, DefinitionRow & { createdByEmail: string | null; versionCount: number }>();
  for (const r of rows) {
    const seen = latest.get(r.def.name);
    if (seen) seen.versionCount++;
    else latest.set(r.def.name, { ...r.def, createdByEmail: r.author, versionCount: 1 });
  }
  return [...latest.values()];
}

/** One version, with the list of all versions of its name (newest first). */
export async function getDefinition(id: string) {
  const d = db();
  const row = await d.query.definitions.findFirst({ where: eq(schema.definitions.id, id) });
  if (!row) return null;
  const versions = await d
    .select({ id: schema.definitions.id, version: schema.definitions.version, createdAt: schema.definitions.createdAt, createdByEmail: schema.user.email })
    .from(schema.definitions)
    .leftJoin(schema.user, eq(schema.definitions.createdBy, schema.user.id))
    .where(eq(schema.definitions.name, row.name))
    .orderBy(desc(schema.definitions.version));
  return { ...row, steps: row.steps as StepInput[], formats: row.formats as OutputFormatId[], versions, latestId: versions[0]!.id };
}

export async function getDefinitionRow(id: string): Promise<DefinitionRow | null> {
  return (await db().query.definitions.findFirst({ where: eq(schema.definitions.id, id) })) ?? null;
}

/** Jobs that ran any version of the definition named `name`, newest first. */
export async function definitionJobs(name: string, limit = 20) {
  return db()
    .select({
      id: schema.jobs.id,
      status: schema.jobs.status,
      createdAt: schema.jobs.createdAt,
      finishedAt: schema.jobs.finishedAt,
      definitionVersion: schema.definitions.version,
      scheduleId: schema.jobs.scheduleId,
      datasetName: schema.datasets.name,
      datasetVersion: schema.datasetVersions.version,
    })
    .from(schema.jobs)
    .innerJoin(schema.definitions, eq(schema.jobs.definitionId, schema.definitions.id))
    .innerJoin(schema.datasetVersions, eq(schema.jobs.datasetVersionId, schema.datasetVersions.id))
    .innerJoin(schema.datasets, eq(schema.datasetVersions.datasetId, schema.datasets.id))
    .where(eq(schema.definitions.name, name))
    .orderBy(desc(schema.jobs.createdAt))
    .limit(limit);
}

/** The API's shape of one definition version. */
export function definitionDocument(row: DefinitionRow, extra: { versions?: { id: string; version: number; createdAt: Date }[] } = {}) {
  return {
    id: row.id,
    name: row.name,
    version: row.version,
    description: row.description ?? undefined,
    steps: row.steps as StepInput[],
    formats: row.formats as OutputFormatId[],
    maxAttempts: row.maxAttempts,
    backoffMs: row.backoffMs,
    createdAt: row.createdAt.toISOString(),
    ...(extra.versions ? { versions: extra.versions.map((v) => ({ id: v.id, version: v.version, createdAt: v.createdAt.toISOString(), href: `/api/definitions/${v.id}` })) } : {}),
    links: [
      { href: `/api/definitions/${row.id}`, rel: "self", type: "application/json", title: `${row.name} v${row.version}` },
      { href: `/api/definitions/${row.id}/execution`, rel: "execute", type: "application/json", title: "run on a dataset" },
    ],
  };
}

// ---- running ----

export const RunInput = z.object({
  dataset: z.string({ error: "must be a dataset id" }).min(1, "must be a dataset id"),
  /** A dataset version number; the latest when left out. */
  datasetVersion: z.number({ error: "must be a version number" }).int("must be a version number").positive("must be a version number").optional(),
  /** BullMQ priority: among prioritised jobs, lower numbers run first; 0 means none. */
  priority: z.number({ error: "must be a whole number" }).int("must be a whole number").min(0, "must not be negative").max(1000, "must be at most 1000").default(0),
  /** Tries before the job counts as failed; the definition's default when left out. */
  maxAttempts: z.number({ error: "must be a whole number" }).int("must be a whole number").min(1, "must be at least 1").max(10, "must be at most 10").optional(),
});
export type RunInput = z.infer<typeof RunInput>;

export type RunOutcome =
  | { ok: true; job: JobRow }
  | { ok: false; status: number; title: string; message: string; fields?: FieldIssue[] };

/**
 * Submits one version of a definition against a dataset version (the latest unless named).
 * The job records the definition version (`definitionId`) and, for schedule runs, the schedule.
 */
export async function runDefinition(input: {
  definitionId: string;
  run: unknown;
  userId: string | null;
  scheduleId?: string;
}): Promise<RunOutcome> {
  const parsed = RunInput.safeParse(input.run);
  if (!parsed.success) {
    const fields = parsed.error.issues.map((i) => ({ field: i.path.join(".") || "(body)", message: `${i.path.join(".") || "body"}: ${i.message}` }));
    return { ok: false, status: 400, title: "Invalid request", message: fields.map((f) => f.message).join("; "), fields };
  }
  const run = parsed.data;
  const def = await getDefinitionRow(input.definitionId);
  if (!def) return { ok: false, status: 404, title: "No such definition", message: `There is no definition version "${input.definitionId}".` };
  const dataset = await getDataset(run.dataset);
  if (!dataset) return { ok: false, status: 400, title: "Invalid request", message: `dataset: there is no dataset "${run.dataset}".`, fields: [{ field: "dataset", message: "no such dataset" }] };
  const version = run.datasetVersion === undefined ? dataset.versions[0] : dataset.versions.find((v) => v.version === run.datasetVersion);
  if (!version) {
    return {
      ok: false,
      status: 400,
      title: "Invalid request",
      message: `datasetVersion: ${dataset.name} has no version ${run.datasetVersion} (latest is ${dataset.latestVersion}).`,
      fields: [{ field: "datasetVersion", message: "no such version" }],
    };
  }
  try {
    const job = await submitJob({
      processId: `${def.name} v${def.version}`,
      steps: def.steps as StepInput[],
      inputs: { definition: def.name, definitionVersion: def.version, dataset: dataset.id, datasetVersion: version.version, formats: def.formats },
      datasetVersionId: version.id,
      definitionId: def.id,
      userId: input.userId,
      priority: run.priority,
      maxAttempts: run.maxAttempts ?? def.maxAttempts,
      scheduleId: input.scheduleId ?? null,
    });
    return { ok: true, job };
  } catch (error) {
    if (error instanceof QueueUnavailableError) return { ok: false, status: 503, title: "Queue unavailable", message: error.message };
    throw error;
  }
}

// ---- preview ----

export const PREVIEW_MAX_DRAWN_VERTICES = 4000;

export interface PreviewStep {
  step: StepName;
  report: FeatureReport;
}

export interface DefinitionPreview {
  datasetId: string;
  datasetName: string;
  datasetVersion: number;
  featureIndex: number;
  crs: string;
  geographic: boolean;
  /** Each step's own report, in order; stops at a step that skipped or refused the feature. */
  steps: PreviewStep[];
  /** The figures a job would record for this feature (fit's if present, else the last step's). */
  report: FeatureReport;
  /** The feature's lines before and after, for the picture (thinned past PREVIEW_MAX_DRAWN_VERTICES). */
  input: number[][][];
  result: number[][][];
  /** Control points of the result's curves, per segment. */
  controlPoints: number[][][];
  bbox: [number, number, number, number] | null;
  /** Properties of the feature, to recognise it. */
  properties: Record<string, unknown> | null;
}

export class PreviewError extends Error {}

/**
 * Runs `steps` on one feature of a dataset's latest version with the same step runners and in
 * the same order as a job, so the figures are those the job would report for that feature.
 */
export async function previewDefinition(steps: StepInput[], datasetId: string, featureIndex: number): Promise<DefinitionPreview> {
  const dataset = await getDataset(datasetId);
  const version = dataset?.versions[0];
  if (!dataset || !version) throw new PreviewError(`There is no dataset "${datasetId}".`);
  const total = version.summary.features;
  if (!Number.isInteger(featureIndex) || featureIndex < 0) throw new PreviewError("Feature: give a feature number from 0.");
  const crs = version.summary.crs.code;
  const dir = storagePath(version.storagePath);
  const files = (await readdir(dir)).map((name) => ({ name, path: join(dir, name) }));
  let found: { index: number; feature: object } | undefined;
  for await (const item of readFeatures(files, { crs })) {
    if (item.index === featureIndex) {
      found = { index: item.index, feature: item.feature };
      break;
    }
    if (item.index > featureIndex) break;
  }
  if (!found) {
    throw new PreviewError(
      featureIndex >= total + (version.summary.skipped ?? 0)
        ? `Feature: ${dataset.name} v${version.version} has ${total} usable features (numbered from 0); ${featureIndex} is past the end.`
        : `Feature: feature ${featureIndex} of ${dataset.name} v${version.version} was skipped when the file was read; the dataset's warnings say why.`,
    );
  }
  const ran: PreviewStep[] = [];
  let current: object = found.feature;
  let report: FeatureReport | undefined;
  for (const spec of steps) {
    const r = runFeatureStep(spec.step, spec.params as never, current, found.index, { code: crs });
    ran.push({ step: spec.step, report: r.report });
    current = r.feature;
    if (!report || spec.step === "fit") report = r.report;
    if (r.report.status === "error" || r.report.status === "skipped") {
      report = r.report;
      break;
    }
  }
  const input = linesOf((found.feature as { geometry?: unknown }).geometry);
  const result = linesOf((current as { geometry?: unknown }).geometry);
  const curves = (current as { curves?: unknown }).curves;
  const controlPoints = Array.isArray(curves) ? (curves as number[][][][]).flat().map((seg) => seg.map((p) => [p[0]!, p[1]!])) : [];
  return {
    datasetId: dataset.id,
    datasetName: dataset.name,
    datasetVersion: version.version,
    featureIndex: found.index,
    crs,
    geographic: crs === "EPSG:4326" || Boolean(version.summary.crs.geographic),
    steps: ran,
    report: report!,
    input: thin(input),
    result: thin(result),
    controlPoints: controlPoints.length * 4 > PREVIEW_MAX_DRAWN_VERTICES ? [] : controlPoints,
    bbox: boxOf([...input, ...result]),
    properties: ((found.feature as { properties?: unknown }).properties ?? null) as Record<string, unknown> | null,
  };
}

function linesOf(geometry: unknown): number[][][] {
  const g = geometry as { type?: string; coordinates?: unknown } | null | undefined;
  if (!g || !Array.isArray(g.coordinates)) return [];
  const pairs = (line: number[][]) => line.map((p) => [p[0]!, p[1]!]);
  switch (g.type) {
    case "LineString":
      return [pairs(g.coordinates as number[][])];
    case "MultiLineString":
    case "Polygon":
      return (g.coordinates as number[][][]).map(pairs);
    case "MultiPolygon":
      return (g.coordinates as number[][][][]).flat().map(pairs);
    default:
      return [];
  }
}

/** Keeps every k-th vertex (and the ends) so the picture stays light; the figures use all of them. */
function thin(parts: number[][][]): number[][][] {
  const n = parts.reduce((a, p) => a + p.length, 0);
  if (n <= PREVIEW_MAX_DRAWN_VERTICES) return parts;
  const k = Math.ceil(n / PREVIEW_MAX_DRAWN_VERTICES);
  return parts.map((p) => p.filter((_, i) => i % k === 0 || i === p.length - 1));
}

function boxOf(parts: number[][][]): [number, number, number, number] | null {
  let minX = Infinity, minY = Infinity, maxX = -Infinity, maxY = -Infinity;
  for (const part of parts)
    for (const [x, y] of part) {
      if (x! < minX) minX = x!;
      if (y! < minY) minY = y!;
      if (x! > maxX) maxX = x!;
      if (y! > maxY) maxY = y!;
    }
  return Number.isFinite(minX) ? [minX, minY, maxX, maxY] : null;
}


// ---- console helpers ----

/** What the editor needs besides the values: the steps' words, the formats and the datasets to preview on. */
export async function editorChoices() {
  const datasets = await listDatasets();
  return {
    guide: STEP_GUIDE,
    formats: OUTPUT_FORMATS.map((id) => ({ id, label: OUTPUT_FORMAT_LABELS[id] })),
    datasets: datasets.filter((d) => d.latest).map((d) => ({ id: d.id, name: d.name, features: d.latest!.summary.features, version: d.latest!.version })),
  };
}

/** The editor's "Preview" button: the steps as written so far, on the chosen feature. */
export async function previewFromForm(form: FormData): Promise<{ preview: DefinitionPreview } | { previewError: string }> {
  const steps = parseSteps(definitionFromForm(form).steps);
  if (!steps.ok) return { previewError: `Fix the steps first: ${steps.message}` };
  const datasetId = String(form.get("previewDataset") ?? "");
  const featureText = String(form.get("previewFeature") ?? "0").trim() || "0";
  const feature = Number(featureText);
  if (!Number.isInteger(feature) || feature < 0) return { previewError: `Feature: "${featureText}" is not a feature number (0, 1, 2, …).` };
  try {
    return { preview: await previewDefinition(steps.data, datasetId, feature) };
  } catch (error) {
    if (error instanceof PreviewError) return { previewError: error.message };
    throw error;
  }
}

/** Choices for a schedule's definition: every version of `name` (newest first), then the latest of every other name. */
export async function definitionChoices(name?: string): Promise<{ id: string; name: string; version: number }[]> {
  const own = name
    ? await db()
        .select({ id: schema.definitions.id, name: schema.definitions.name, version: schema.definitions.version })
        .from(schema.definitions)
        .where(eq(schema.definitions.name, name))
        .orderBy(desc(schema.definitions.version))
    : [];
  const others = (await listDefinitions()).filter((d) => d.name !== name).map((d) => ({ id: d.id, name: d.name, version: d.version }));
  return [...own, ...others];
}

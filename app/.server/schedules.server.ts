import type { Worker } from "bullmq";
import { CronExpressionParser } from "cron-parser";
import { and, desc, eq, gte, inArray } from "drizzle-orm";
import { z } from "zod";
import { removeScheduler, startScheduleWorker, syncSchedulers, upsertScheduler, type ScheduleTickData } from "../../jobs/schedules";
import { QueueUnavailableError } from "../../jobs/queue";
import { db, schema } from "./db/client.server";
import { runDefinition } from "./definitions.server";
import { logger } from "./logger.server";

/**
 * Schedules: a cron expression in a time zone that submits one definition version against the
 * latest version of a dataset. The database row is the truth; BullMQ job schedulers (one per
 * schedule that is not paused, jobs/schedules.ts) only say when. Pausing removes the
 * scheduler, resuming puts it back; the tick checks the row again, so a paused schedule never
 * submits even if a tick was already on its way.
 */

export type ScheduleRow = typeof schema.schedules.$inferSelect;

const CRON_FIELDS = /^(\S+\s+){4}\S+(\s+\S+)?$/;

/** The next `count` run times of a cron expression in a time zone, or a sentence saying what is wrong. */
export function nextRuns(cron: string, timezone: string, count = 1, from = new Date()): { ok: true; times: Date[] } | { ok: false; message: string } {
  const tz = checkTimezone(timezone);
  if (!tz.ok) return tz;
  const text = cron.trim();
  if (!text) return { ok: false, message: "Cron: write an expression such as `0 2 * * *` (02:00 every day)." };
  if (!text.startsWith("@") && !CRON_FIELDS.test(text)) {
    return {
      ok: false,
      message: `Cron: "${text}" has ${text.split(/\s+/).length} fields; write 5 (minute hour day-of-month month day-of-week) or 6 (with seconds first), e.g. \`0 2 * * *\`.`,
    };
  }
  try {
    const expr = CronExpressionParser.parse(text, { tz: timezone, currentDate: from });
    const times: Date[] = [];
    for (let i = 0; i < count; i++) times.push(expr.next().toDate());
    return { ok: true, times };
  } catch (error) {
    return { ok: false, message: `Cron: "${text}" is not a valid expression (${error instanceof Error ? error.message : String(error)}).` };
  }
}

function checkTimezone(timezone: string): { ok: true } | { ok: false; message: string } {
  try {
    if (!timezone.trim()) throw new RangeError("empty");
    new Intl.DateTimeFormat("en", { timeZone: timezone });
    return { ok: true };
  } catch {
    return { ok: false, message: `Time zone: "${timezone}" is not a time zone name; use an IANA name such as UTC, Europe/London or America/Chicago.` };
  }
}

export function timezoneNames(): string[] {
  return ["UTC", ...Intl.supportedValuesOf("timeZone").filter((z) => z !== "UTC")];
}

const ScheduleFields = z.object({
  definition: z.string({ error: "Definition: choose a definition version" }).min(1, "Definition: choose a definition version"),
  dataset: z.string({ error: "Dataset: choose a dataset" }).min(1, "Dataset: choose a dataset"),
  cron: z.string({ error: "Cron: write a cron expression" }).trim().max(200, "Cron: at most 200 characters"),
  timezone: z.string({ error: "Time zone: name a time zone" }).trim().default("UTC"),
  paused: z.boolean({ error: "Paused: must be true or false" }).default(false),
});
export const ScheduleInput = ScheduleFields.superRefine((v, ctx) => {
  const check = nextRuns(v.cron, v.timezone);
  if (!check.ok) ctx.addIssue({ code: "custom", path: [check.message.startsWith("Time zone") ? "timezone" : "cron"], message: check.message });
});
export type ScheduleInput = z.infer<typeof ScheduleInput>;

/** Changes of an existing schedule; only the fields given change. */
export const SchedulePatch = ScheduleFields.partial().strict();

export type ScheduleOutcome =
  | { ok: true; schedule: ScheduleRow }
  | { ok: false; status: number; message: string; fields?: { field: string; message: string }[] };

function invalid(error: z.ZodError): ScheduleOutcome {
  const fields = error.issues.map((i) => ({
    field: i.path.join(".") || "(body)",
    message: i.code === "unrecognized_keys" ? `Unknown field ${i.keys.join(", ")}; a schedule has definition, dataset, cron, timezone, paused.` : i.message,
  }));
  return { ok: false, status: 400, message: fields.map((f) => f.message).join("; "), fields };
}

async function checkReferences(definitionId: string | undefined, datasetId: string | undefined): Promise<ScheduleOutcome | null> {
  const d = db();
  if (definitionId !== undefined && !(await d.query.definitions.findFirst({ columns: { id: true }, where: eq(schema.definitions.id, definitionId) }))) {
    return { ok: false, status: 400, message: `Definition: there is no definition version "${definitionId}".`, fields: [{ field: "definition", message: "no such definition" }] };
  }
  if (datasetId !== undefined && !(await d.query.datasets.findFirst({ columns: { id: true }, where: eq(schema.datasets.id, datasetId) }))) {
    return { ok: false, status: 400, message: `Dataset: there is no dataset "${datasetId}".`, fields: [{ field: "dataset", message: "no such dataset" }] };
  }
  return null;
}

/** Records a schedule and, unless paused, starts its job scheduler. */
export async function createSchedule(raw: unknown, userId: string | null): Promise<ScheduleOutcome> {
  const parsed = ScheduleInput.safeParse(raw);
  if (!parsed.success) return invalid(parsed.error);
  const v = parsed.data;
  const bad = await checkReferences(v.definition, v.dataset);
  if (bad) return bad;
  const [row] = await db()
    .insert(schema.schedules)
    .values({ id: crypto.randomUUID(), definitionId: v.definition, datasetId: v.dataset, cron: v.cron, timezone: v.timezone, paused: v.paused, createdBy: userId })
    .returning();
  try {
    if (!row!.paused) await upsertScheduler({ id: row!.id, cron: row!.cron, timezone: row!.timezone });
  } catch (error) {
    await db().delete(schema.schedules).where(eq(schema.schedules.id, row!.id));
    return queueAway(error);
  }
  return { ok: true, schedule: row! };
}

/** Changes the definition, dataset, cron or time zone (and `paused`, when given). */
export async function updateSchedule(id: string, raw: unknown): Promise<ScheduleOutcome | null> {
  const current = await getScheduleRow(id);
  if (!current) return null;
  const patch = SchedulePatch.safeParse(raw);
  if (!patch.success) return invalid(patch.error);
  const merged = ScheduleInput.safeParse({
    definition: patch.data.definition ?? current.definitionId,
    dataset: patch.data.dataset ?? current.datasetId,
    cron: patch.data.cron ?? current.cron,
    timezone: patch.data.timezone ?? current.timezone,
    paused: patch.data.paused ?? current.paused,
  });
  if (!merged.success) return invalid(merged.error);
  const v = merged.data;
  const bad = await checkReferences(patch.data.definition, patch.data.dataset);
  if (bad) return bad;
  const [row] = await db()
    .update(schema.schedules)
    .set({ definitionId: v.definition, datasetId: v.dataset, cron: v.cron, timezone: v.timezone, paused: v.paused })
    .where(eq(schema.schedules.id, id))
    .returning();
  try {
    await applyScheduler(row!);
  } catch (error) {
    await db().update(schema.schedules).set({ definitionId: current.definitionId, datasetId: current.datasetId, cron: current.cron, timezone: current.timezone, paused: current.paused }).where(eq(schema.schedules.id, id));
    return queueAway(error);
  }
  return { ok: true, schedule: row! };
}

/** Pause (`true`) or resume (`false`): operators may do this, engineers may edit. */
export async function setSchedulePaused(id: string, paused: boolean): Promise<ScheduleOutcome | null> {
  const current = await getScheduleRow(id);
  if (!current) return null;
  const [row] = await db().update(schema.schedules).set({ paused }).where(eq(schema.schedules.id, id)).returning();
  try {
    await applyScheduler(row!);
  } catch (error) {
    await db().update(schema.schedules).set({ paused: current.paused }).where(eq(schema.schedules.id, id));
    return queueAway(error);
  }
  return { ok: true, schedule: row! };
}

/** Removes a schedule; the jobs it started stay (their `scheduleId` is cleared). */
export async function deleteSchedule(id: string): Promise<ScheduleOutcome | null> {
  const current = await getScheduleRow(id);
  if (!current) return null;
  try {
    await removeScheduler(id);
  } catch (error) {
    return queueAway(error);
  }
  await db().delete(schema.schedules).where(eq(schema.schedules.id, id));
  return { ok: true, schedule: current };
}

async function applyScheduler(row: ScheduleRow): Promise<void> {
  if (row.paused) await removeScheduler(row.id);
  else await upsertScheduler({ id: row.id, cron: row.cron, timezone: row.timezone });
}

function queueAway(error: unknown): ScheduleOutcome {
  const cause = error instanceof QueueUnavailableError ? error.message : `The queue is not reachable right now (${error instanceof Error ? error.message : String(error)}).`;
  return { ok: false, status: 503, message: `${cause} Nothing was changed; try again in a minute.` };
}

export async function getScheduleRow(id: string): Promise<ScheduleRow | null> {
  return (await db().query.schedules.findFirst({ where: eq(schema.schedules.id, id) })) ?? null;
}

/** Schedules with the names people need, the next run time and the last run's status. */
export async function listSchedules(now = new Date()) {
  const d = db();
  const rows = await d
    .select({
      schedule: schema.schedules,
      definitionName: schema.definitions.name,
      definitionVersion: schema.definitions.version,
      datasetName: schema.datasets.name,
      datasetLatestVersion: schema.datasets.latestVersion,
    })
    .from(schema.schedules)
    .innerJoin(schema.definitions, eq(schema.schedules.definitionId, schema.definitions.id))
    .innerJoin(schema.datasets, eq(schema.schedules.datasetId, schema.datasets.id))
    .orderBy(schema.definitions.name, schema.datasets.name);
  const ids = rows.map((r) => r.schedule.id);
  const lastJobs = ids.length
    ? await d
        .select({ id: schema.jobs.id, scheduleId: schema.jobs.scheduleId, status: schema.jobs.status, createdAt: schema.jobs.createdAt })
        .from(schema.jobs)
        .where(inArray(schema.jobs.scheduleId, ids))
        .orderBy(desc(schema.jobs.createdAt))
    : [];
  const latestDefs = await latestDefinitionIds();
  return rows.map((r) => {
    const next = r.schedule.paused ? null : nextRuns(r.schedule.cron, r.schedule.timezone, 1, now);
    const last = lastJobs.find((j) => j.scheduleId === r.schedule.id) ?? null;
    return {
      ...r.schedule,
      definitionName: r.definitionName,
      definitionVersion: r.definitionVersion,
      newerDefinitionId: latestDefs.get(r.definitionName)?.id !== r.schedule.definitionId ? latestDefs.get(r.definitionName) ?? null : null,
      datasetName: r.datasetName,
      datasetLatestVersion: r.datasetLatestVersion,
      nextRunAt: next?.ok ? next.times[0]! : null,
      lastJob: last,
    };
  });
}

async function latestDefinitionIds(): Promise<Map<string, { id: string; version: number }>> {
  const rows = await db().select({ id: schema.definitions.id, name: schema.definitions.name, version: schema.definitions.version }).from(schema.definitions).orderBy(desc(schema.definitions.version));
  const out = new Map<string, { id: string; version: number }>();
  for (const r of rows) if (!out.has(r.name)) out.set(r.name, { id: r.id, version: r.version });
  return out;
}

/** One schedule with its next run times and its last runs (jobs it submitted, newest first). */
export async function getSchedule(id: string, options: { runs?: number; upcoming?: number } = {}) {
  const all = await listSchedules();
  const s = all.find((x) => x.id === id);
  if (!s) return null;
  const upcoming = s.paused ? [] : (() => {
    const r = nextRuns(s.cron, s.timezone, options.upcoming ?? 5);
    return r.ok ? r.times : [];
  })();
  const runs = await db()
    .select({
      id: schema.jobs.id,
      status: schema.jobs.status,
      createdAt: schema.jobs.createdAt,
      finishedAt: schema.jobs.finishedAt,
      featuresDone: schema.jobs.featuresDone,
      datasetVersion: schema.datasetVersions.version,
      datasetVersionId: schema.jobs.datasetVersionId,
      definitionId: schema.jobs.definitionId,
    })
    .from(schema.jobs)
    .innerJoin(schema.datasetVersions, eq(schema.jobs.datasetVersionId, schema.datasetVersions.id))
    .where(eq(schema.jobs.scheduleId, id))
    .orderBy(desc(schema.jobs.createdAt))
    .limit(options.runs ?? 20);
  return { ...s, upcoming, runs };
}

/** The API's shape of a schedule. */
export function scheduleDocument(s: NonNullable<Awaited<ReturnType<typeof getSchedule>>> | Awaited<ReturnType<typeof listSchedules>>[number]) {
  return {
    id: s.id,
    definition: { id: s.definitionId, name: s.definitionName, version: s.definitionVersion, href: `/api/definitions/${s.definitionId}` },
    dataset: { id: s.datasetId, name: s.datasetName, latestVersion: s.datasetLatestVersion, href: `/api/datasets/${s.datasetId}` },
    cron: s.cron,
    timezone: s.timezone,
    paused: s.paused,
    nextRunAt: s.nextRunAt?.toISOString() ?? null,
    lastRunAt: s.lastRunAt?.toISOString() ?? null,
    createdAt: s.createdAt.toISOString(),
    ...("runs" in s
      ? {
          upcoming: s.upcoming.map((t) => t.toISOString()),
          runs: s.runs.map((r) => ({ jobID: r.id, status: r.status, datasetVersion: r.datasetVersion, created: r.createdAt.toISOString(), finished: r.finishedAt?.toISOString() ?? null, href: `/api/jobs/${r.id}` })),
        }
      : {}),
    links: [{ href: `/api/schedules/${s.id}`, rel: "self", type: "application/json", title: "schedule" }],
  };
}

export type TickOutcome = { submitted: string } | { skipped: string };

/**
 * One tick of a schedule: submits its definition version against the dataset's latest version
 * at this moment, recorded with the schedule's id. Skipped while the schedule is paused or
 * gone, while its previous run is still waiting or running (runs of one schedule never
 * overlap), and when this tick already submitted (a retried tick submits once).
 */
export async function runScheduleTick(scheduleId: string, due: Date): Promise<TickOutcome> {
  const d = db();
  const s = await getScheduleRow(scheduleId);
  if (!s) return { skipped: "the schedule no longer exists" };
  if (s.paused) return { skipped: "the schedule is paused" };
  const already = await d.query.jobs.findFirst({ columns: { id: true }, where: and(eq(schema.jobs.scheduleId, scheduleId), gte(schema.jobs.createdAt, due)) });
  if (already) return { skipped: `this tick already submitted job ${already.id}` };
  const open = await d.query.jobs.findFirst({
    columns: { id: true, status: true },
    where: and(eq(schema.jobs.scheduleId, scheduleId), inArray(schema.jobs.status, ["accepted", "running"])),
  });
  if (open) {
    logger.info({ scheduleId, jobId: open.id }, "schedule tick skipped: the previous run is still " + open.status);
    return { skipped: `the previous run (job ${open.id}) is still ${open.status}` };
  }
  const outcome = await runDefinition({ definitionId: s.definitionId, run: { dataset: s.datasetId }, userId: s.createdBy, scheduleId });
  if (!outcome.ok) {
    if (outcome.status === 503) throw new QueueUnavailableError(outcome.message);
    logger.error({ scheduleId, reason: outcome.message }, "schedule tick could not submit its job");
    return { skipped: outcome.message };
  }
  await d.update(schema.schedules).set({ lastRunAt: new Date() }).where(eq(schema.schedules.id, scheduleId));
  logger.info({ scheduleId, jobId: outcome.job.id, datasetVersionId: outcome.job.datasetVersionId }, "schedule submitted a job");
  return { submitted: outcome.job.id };
}

let worker: Worker<ScheduleTickData> | undefined;
let retryTimer: NodeJS.Timeout | undefined;

/**
 * At boot, from one place: make the queue's job schedulers match the schedules table (every
 * schedule that is not paused), and start the tick worker. If the queue is away, tries again
 * every 30 s until it answers.
 */
export async function startSchedules(): Promise<void> {
  startScheduleTicks();
  try {
    const rows = await db().query.schedules.findMany({ where: eq(schema.schedules.paused, false) });
    const { upserted, removed } = await syncSchedulers(rows.map((r) => ({ id: r.id, cron: r.cron, timezone: r.timezone })));
    if (upserted || removed) logger.info({ upserted, removed }, "schedules: job schedulers in place");
  } catch (error) {
    logger.error({ err: error }, "schedules: could not set up job schedulers; trying again in 30 s");
    retryTimer = setTimeout(() => void startSchedules(), 30_000);
    retryTimer.unref();
  }
}

/**
 * In `npm run worker` processes (a real Redis): take ticks too, so schedules keep submitting
 * while no web process runs. Only the web process syncs the job schedulers; each tick is taken
 * by one process, and a tick handled twice submits once (`runScheduleTick`).
 */
export function startScheduleTicks(): void {
  worker ??= startScheduleWorker(runScheduleTick, (error) => logger.error({ err: error }, "schedule worker error"));
}

export async function stopSchedules(): Promise<void> {
  if (retryTimer) clearTimeout(retryTimer);
  await worker?.close();
  worker = undefined;
}

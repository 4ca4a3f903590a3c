import { and, asc, count, desc, eq, gte, isNull, sql, sum } from "drizzle-orm";
import { db, schema } from "./db/client.server";
import type { JobStatus } from "./jobs.server";
import { listSchedules } from "./schedules.server";

/**
 * The board: what an operator needs on arrival. Counts and lists are of jobs as people
 * submitted them; the chunk jobs of a fanned-out job (rows with a parent) are part of their
 * parent and not counted again.
 */

const HOUR_MS = 3_600_000;
const topLevel = isNull(schema.jobs.parentId);

export async function boardCounts(): Promise<Record<JobStatus, number>> {
  const rows = await db().select({ status: schema.jobs.status, n: count() }).from(schema.jobs).where(topLevel).groupBy(schema.jobs.status);
  const out: Record<JobStatus, number> = { accepted: 0, running: 0, successful: 0, failed: 0, dismissed: 0 };
  for (const r of rows) out[r.status] = r.n;
  return out;
}

export interface HourBucket {
  /** Start of the hour (UTC, on the hour). */
  start: Date;
  successful: number;
  failed: number;
  /** Features of the jobs that succeeded in this hour. */
  features: number;
}

/**
 * Jobs finished per hour over the last `hours` whole hours plus the current one (oldest
 * first), by the hour they finished in, and the features those that succeeded processed.
 */
export async function throughput(hours = 12, now = new Date()): Promise<HourBucket[]> {
  const current = Math.floor(now.getTime() / HOUR_MS) * HOUR_MS;
  const since = current - hours * HOUR_MS;
  const bucket = sql<number>`cast(${schema.jobs.finishedAt} / ${HOUR_MS} as integer)`;
  const rows = await db()
    .select({ hour: bucket, status: schema.jobs.status, jobs: count(), features: sum(schema.jobs.featuresDone) })
    .from(schema.jobs)
    .where(and(topLevel, gte(schema.jobs.finishedAt, new Date(since)), sql`${schema.jobs.status} in ('successful', 'failed')`))
    .groupBy(bucket, schema.jobs.status);
  const out: HourBucket[] = [];
  for (let t = since; t <= current; t += HOUR_MS) out.push({ start: new Date(t), successful: 0, failed: 0, features: 0 });
  for (const r of rows) {
    const b = out[Number(r.hour) - since / HOUR_MS];
    if (!b) continue;
    if (r.status === "successful") {
      b.successful += r.jobs;
      b.features += Number(r.features ?? 0);
    } else b.failed += r.jobs;
  }
  return out;
}

const jobSummary = {
  id: schema.jobs.id,
  processId: schema.jobs.processId,
  status: schema.jobs.status,
  message: schema.jobs.message,
  progress: schema.jobs.progress,
  featuresDone: schema.jobs.featuresDone,
  featuresTotal: schema.jobs.featuresTotal,
  createdAt: schema.jobs.createdAt,
  startedAt: schema.jobs.startedAt,
  finishedAt: schema.jobs.finishedAt,
  scheduleId: schema.jobs.scheduleId,
  datasetName: schema.datasets.name,
  datasetVersion: schema.datasetVersions.version,
};

function jobsWith(where: ReturnType<typeof and>) {
  return db()
    .select(jobSummary)
    .from(schema.jobs)
    .innerJoin(schema.datasetVersions, eq(schema.jobs.datasetVersionId, schema.datasetVersions.id))
    .innerJoin(schema.datasets, eq(schema.datasetVersions.datasetId, schema.datasets.id))
    .where(where);
}

/** The job that has waited longest for a worker, if any. */
export async function oldestWaiting() {
  const [row] = await jobsWith(and(topLevel, eq(schema.jobs.status, "accepted"))).orderBy(asc(schema.jobs.createdAt)).limit(1);
  return row ?? null;
}

/** Failed jobs nobody has retried yet (a retry makes the job `accepted` again), newest first. */
export async function failuresNeedingAction(limit = 20) {
  return jobsWith(and(topLevel, eq(schema.jobs.status, "failed"))).orderBy(desc(schema.jobs.finishedAt)).limit(limit);
}

export async function runningNow(limit = 10) {
  return jobsWith(and(topLevel, eq(schema.jobs.status, "running"))).orderBy(asc(schema.jobs.startedAt)).limit(limit);
}

/** Everything the board shows, read at one moment. */
export async function board(now = new Date(), hours = 12) {
  const [counts, hourly, oldest, failures, running, schedules] = await Promise.all([
    boardCounts(),
    throughput(hours, now),
    oldestWaiting(),
    failuresNeedingAction(),
    runningNow(),
    listSchedules(now),
  ]);
  const upcoming = schedules
    .filter((s) => s.nextRunAt)
    .sort((a, b) => a.nextRunAt!.getTime() - b.nextRunAt!.getTime())
    .slice(0, 5);
  return { now, hours, counts, hourly, oldest, failures, running, upcoming, pausedSchedules: schedules.filter((s) => s.paused).length };
}

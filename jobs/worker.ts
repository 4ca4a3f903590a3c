// Entry of `npm run worker` (the Procfile's `worker:`): with REDIS_URL set, runs jobs that the
// web process enqueued, and submits the jobs of schedules when their time comes. Several such
// processes may run at once, on one machine or many; each runs WORKER_CONCURRENCY jobs at a
// time, each job's features in a worker thread of its own.
// SIGTERM (or SIGINT): running jobs stop after their current feature and go back to the queue;
// the process exits within LISSOM_SHUTDOWN_MS (jobs/runner/settings.ts) whatever happens.
import { closeDatabase, migrateDatabase } from "../app/.server/db/client.server";
import { env } from "../app/.server/env.server";
import { logger } from "../app/.server/logger.server";
import { startScheduleTicks, stopSchedules } from "../app/.server/schedules.server";
import { sweepStaleStaging } from "../app/.server/storage.server";
import { closeQueue } from "./queue";
import { runnerSettings } from "./runner/settings";
import { shutdownJobWorker, startJobWorker } from "./worker-core";

const settings = env();
const runner = runnerSettings();
if (!settings.REDIS_URL) {
  logger.warn("REDIS_URL is not set: this worker would only see its own in-memory queue. Set REDIS_URL to the web process's Redis, or let the web process run jobs itself (the default).");
  process.exit(1);
}
let worker: ReturnType<typeof startJobWorker> | undefined;
let stopping = false;
// Installed first, so a stop asked for while the worker starts is honoured too.
process.on("SIGTERM", () => void shutdown("SIGTERM"));
process.on("SIGINT", () => void shutdown("SIGINT"));

await migrateDatabase();
const swept = await sweepStaleStaging();
if (swept > 0) logger.info({ folders: swept }, "removed staging folders left by stopped processes");
if (!stopping) {
  worker = startJobWorker({ concurrency: settings.WORKER_CONCURRENCY });
  // Schedule ticks are taken here too, so nightly schedules run while no web process does.
  startScheduleTicks();
  logger.info({ concurrency: settings.WORKER_CONCURRENCY, pid: process.pid }, "worker started");
}

async function shutdown(signal: string) {
  if (stopping) return;
  stopping = true;
  logger.info({ signal }, "worker stopping: running jobs stop after their current feature");
  // A last resort if closing itself hangs (a Redis that does not answer).
  const hardStop = setTimeout(() => {
    logger.error("worker did not stop in time; exiting");
    process.exit(1);
  }, runner.LISSOM_SHUTDOWN_MS + 5000);
  hardStop.unref();
  const inTime = worker ? await shutdownJobWorker(worker, runner.LISSOM_SHUTDOWN_MS) : true;
  if (!inTime) logger.warn("running jobs did not stop in time; the queue gives them to another worker once their lock expires");
  await stopSchedules().catch(() => undefined);
  await closeQueue().catch(() => undefined);
  await closeDatabase();
  logger.info("worker stopped");
  process.exit(inTime ? 0 : 1);
}

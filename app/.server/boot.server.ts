import type { Worker } from "bullmq";
import { startJobWorker } from "../../jobs/worker-core";
import { migrateDatabase } from "./db/client.server";
import { env } from "./env.server";
import { requeueLostJobs, startReconciler } from "./jobs.server";
import { logger } from "./logger.server";
import { startSchedules } from "./schedules.server";
import { seedDemo } from "./seed.server";
import { sweepStaleStaging } from "./storage.server";

let booting: Promise<void> | undefined;
let embeddedWorker: Worker | undefined;

/**
 * Start-up of the web process, once: check settings, migrate, seed demo data, start the
 * embedded worker when no REDIS_URL is set, and queue again whatever the queue lost.
 */
export function boot(): Promise<void> {
  booting ??= (async () => {
    const settings = env();
    await migrateDatabase();
    if (settings.demo) await seedDemo();
    const swept = await sweepStaleStaging();
    if (swept > 0) logger.info({ folders: swept }, "removed staging folders left by stopped processes");
    if (!settings.REDIS_URL) {
      embeddedWorker = startJobWorker({ concurrency: settings.WORKER_CONCURRENCY });
      logger.info("Queue: embedded (in-memory Redis fake); jobs run inside this process.");
    } else {
      logger.info("Queue: Redis at REDIS_URL; run `npm run worker` to process jobs.");
      // What a Redis restart loses is queued again once it is back.
      startReconciler();
    }
    try {
      const n = await requeueLostJobs();
      if (n > 0) logger.warn({ jobs: n }, "queued again jobs that the queue had lost");
    } catch (error) {
      logger.error({ err: error }, "could not check the queue for lost jobs; they will be checked at the next start");
    }
    // Job schedulers are upserted from here only (one per schedule that is not paused).
    await startSchedules();
  })();
  return booting;
}

export function embeddedWorkerRunning(): boolean {
  return Boolean(embeddedWorker?.isRunning());
}

// Entry of `npm run worker` (the Procfile's `worker:`): with REDIS_URL set, runs jobs that the
// web process enqueued. Several such processes may run at once.
import { closeDatabase, migrateDatabase } from "../app/.server/db/client.server";
import { env } from "../app/.server/env.server";
import { logger } from "../app/.server/logger.server";
import { startJobWorker } from "./worker-core";

const SHUTDOWN_LIMIT_MS = 30_000;

const settings = env();
if (!settings.REDIS_URL) {
  logger.warn("REDIS_URL is not set: this worker would only see its own in-memory queue. Set REDIS_URL to the web process's Redis, or let the web process run jobs itself (the default).");
  process.exit(1);
}
await migrateDatabase();
const worker = startJobWorker({ concurrency: settings.WORKER_CONCURRENCY });
logger.info({ concurrency: settings.WORKER_CONCURRENCY }, "worker started");

async function shutdown(signal: string) {
  logger.info({ signal }, "worker stopping");
  const timer = setTimeout(() => {
    logger.error("worker did not stop in time; exiting");
    process.exit(1);
  }, SHUTDOWN_LIMIT_MS);
  await worker.close();
  await closeDatabase();
  clearTimeout(timer);
  process.exit(0);
}
process.on("SIGTERM", () => void shutdown("SIGTERM"));
process.on("SIGINT", () => void shutdown("SIGINT"));

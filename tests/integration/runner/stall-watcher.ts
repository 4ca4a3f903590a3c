/**
 * A process that only runs BullMQ's stalled check on Lissom's queue (every 500 ms, for locks of
 * 500 ms) and takes no job: it stands for the other workers of a scaled deployment, whose
 * stalled checks take over a job whose worker stopped renewing its lock. Prints "watching" once
 * the check runs; emits nothing else.
 */
import { Worker } from "bullmq";
import { QUEUE_NAME, queuePrefix } from "../../../jobs/queue";
import { createRedisConnection } from "../../../jobs/redis";

const watcher = new Worker(
  QUEUE_NAME,
  async () => {
    throw new Error("the stall watcher takes no jobs");
  },
  { autorun: false, connection: createRedisConnection(), prefix: queuePrefix(), stalledInterval: 500, lockDuration: 500 },
);
watcher.on("error", (error) => process.stderr.write(`stall watcher: ${error.message}\n`));
await watcher.waitUntilReady();
void watcher.startStalledCheckTimer();
process.stdout.write("watching\n");

/**
 * Redis connections for Lissom's queue (BullMQ).
 *
 * Contract:
 * - Scaled mode: `REDIS_URL` (or `opts.url`) names a real Redis; connections are ioredis
 *   clients with `maxRetriesPerRequest: null`, which BullMQ requires for workers.
 * - Embedded mode (default, no URL): an in-memory Redis (jobs/redis-fake) inside this process;
 *   every connection shares one data space, and `duplicate()` (BullMQ's blocking connections)
 *   too. `resetFakeRedis()` empties it, for tests.
 * - `createQueueConnectionForWeb()` is for Queue objects used while answering a request: with
 *   a real Redis it disables the offline queue, so a command fails at once while Redis is away
 *   and the route can answer 503 instead of hanging.
 * - `isRedisReady(connection)` says whether a connection can serve a command now (always true
 *   for the embedded Redis). BullMQ waits for a connection's first "ready" before it sends
 *   anything, so a web Queue whose Redis was already down when the process started would wait
 *   rather than fail: routes check `isRedisReady` first and answer 503 when it is false.
 *
 * Not covered yet:
 * - Redis Cluster and Sentinel URLs.
 */
import { Redis } from "ioredis";
import { createFakeRedis, resetFakeRedis as resetEmbedded } from "./redis-fake";

function redisUrl(url?: string): string | undefined {
  const value = url ?? process.env.REDIS_URL;
  return value && value.trim() !== "" ? value.trim() : undefined;
}

/** "redis" when REDIS_URL is set, else "embedded". */
export function queueBackend(): "embedded" | "redis" {
  return redisUrl() ? "redis" : "embedded";
}

/** A connection for BullMQ Queue, Worker, QueueEvents and FlowProducer objects. */
export function createRedisConnection(opts: { url?: string } = {}): Redis {
  const url = redisUrl(opts.url);
  if (url) return new Redis(url, { maxRetriesPerRequest: null });
  return createFakeRedis();
}

/** A connection for Queue objects used from web requests: fails fast while Redis is down. */
export function createQueueConnectionForWeb(opts: { url?: string } = {}): Redis {
  const url = redisUrl(opts.url);
  if (url) return new Redis(url, { maxRetriesPerRequest: 1, enableOfflineQueue: false });
  return createFakeRedis();
}

/** Empties the embedded in-memory Redis (no effect on a real Redis). */
export function resetFakeRedis(): void {
  resetEmbedded();
}

/** True when `connection` can serve commands now; a route answers 503 when it is false. */
export function isRedisReady(connection: Redis): boolean {
  return connection.status === "ready";
}

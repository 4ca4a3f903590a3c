/**
 * The in-memory Redis used in embedded mode: ioredis-mock made able to run BullMQ.
 *
 * Contract: `createFakeRedis()` returns an ioredis-compatible connection (a `FakeRedis`);
 * every connection made by it, and every `duplicate()` of one, shares one data space for the
 * life of the process; `resetFakeRedis()` empties that data space (FLUSHALL). See
 * fake-redis.ts for the commands and script-runner.ts for the script semantics.
 *
 * Not covered yet: see the lists in fake-redis.ts, script-runner.ts, prelude.ts, cjson.ts,
 * cmsgpack.ts, streams.ts, collections.ts, store.ts and lua-vm.ts.
 */
import type { Redis } from "ioredis";
import { FakeRedis, type FakeRedisOptions } from "./fake-redis";

export { FakeRedis, scriptRunner, type FakeRedisOptions } from "./fake-redis";
export { EMULATED_REDIS_VERSION, LOG_LEVELS, type ScriptLogSink } from "./script-runner";

/** The host name that keys the embedded data space (ioredis-mock shares data per host:port/db). */
const EMBEDDED_HOST = "lissom-embedded";

function embedded(options: FakeRedisOptions = {}): FakeRedis {
  return new FakeRedis({ ...options, host: EMBEDDED_HOST, port: 6379, db: 0 });
}

/** A connection to the embedded data space, typed as the ioredis client it stands in for. */
export function createFakeRedis(options: FakeRedisOptions = {}): Redis {
  return embedded(options) as unknown as Redis;
}

/** Empties the embedded data space; connections stay open and scripts stay loaded. */
export function resetFakeRedis(): void {
  const probe = embedded({ lazyConnect: true });
  probe.data.clear();
  probe.expires.clear();
  probe.disconnect();
}

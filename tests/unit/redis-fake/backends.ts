/**
 * The Redis servers the script-bridge tests run against: always the in-memory fake, and also
 * a real redis-server when REDIS_URL is set, so every expectation below is checked against
 * the real thing (the values were measured on redis-server 7.0.15, Debian's package).
 */
import { Redis } from "ioredis";
import { createFakeRedis } from "../../../jobs/redis-fake";

export interface Backend {
  name: string;
  connect(): Redis;
}

export function backends(): Backend[] {
  const list: Backend[] = [{ name: "fake", connect: () => createFakeRedis() }];
  const url = process.env.REDIS_URL;
  if (url) list.push({ name: "redis-server", connect: () => new Redis(url) });
  return list;
}

/** A key prefix unique to this test run, so a shared real Redis is never flushed. */
export function runPrefix(area: string): string {
  return `lissom-test:${area}:${process.pid}:${Date.now().toString(36)}:`;
}

/** Deletes every key under `prefix`. */
export async function deleteKeys(client: Redis, prefix: string): Promise<void> {
  let cursor = "0";
  do {
    const [next, keys] = await client.scan(cursor, "MATCH", `${prefix}*`, "COUNT", 1000);
    cursor = next;
    if (keys.length) await client.del(...keys);
  } while (cursor !== "0");
}

/** EVAL with Buffer replies (ioredis has `evalBuffer` at run time but not in its types). */
export function evalBuffer(client: Redis, script: string, numKeys: number, ...args: (string | number | Buffer)[]): Promise<unknown> {
  return (client as unknown as { evalBuffer(...a: unknown[]): Promise<unknown> }).evalBuffer(script, numKeys, ...args);
}

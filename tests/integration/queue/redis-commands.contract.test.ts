/**
 * The Redis commands BullMQ's scripts and clients use, with the edge cases they depend on,
 * run on the embedded in-memory Redis and (with REDIS_URL) on redis-server. Expected values
 * come from the Redis command reference (redis.io/commands/<name>) and were checked on
 * redis-server 7.0.15.
 */
import type { Redis } from "ioredis";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createRedisConnection, queueBackend } from "../../../jobs/redis";

const P = `lissom-test:commands:${process.pid}:${Date.now().toString(36)}:`;

describe(`Redis commands on ${queueBackend() === "embedded" ? "the embedded in-memory Redis" : "redis-server (REDIS_URL)"}`, () => {
  let r: Redis;
  let other: Redis;
  beforeAll(() => {
    r = createRedisConnection();
    other = createRedisConnection();
  });
  afterAll(async () => {
    const keys = await r.keys(`${P}*`);
    if (keys.length) await r.del(...keys);
    await other.quit();
    await r.quit();
  });

  const lua = (script: string, keys: string[], ...args: (string | number)[]) => r.eval(script, keys.length, ...keys, ...args);

  describe("keys that become empty are removed", () => {
    it("after ZREM, LREM, LTRIM, RPOPLPUSH, ZREMRANGEBYSCORE, ZPOPMIN, HDEL and SREM", async () => {
      const k = (s: string) => `${P}empty:${s}`;
      await r.zadd(k("z1"), 1, "a");
      await r.zadd(k("z2"), 1, "a");
      await r.zadd(k("z3"), 1, "a");
      await r.rpush(k("l1"), "a");
      await r.rpush(k("l2"), "a");
      await r.rpush(k("l3"), "a");
      await r.hset(k("h"), "f", "v");
      await r.sadd(k("s"), "m");
      const reply = await lua(
        `redis.call('ZREM', KEYS[1], 'a')
         redis.call('ZREMRANGEBYSCORE', KEYS[2], '-inf', '+inf')
         redis.call('ZPOPMIN', KEYS[3])
         redis.call('LREM', KEYS[4], 0, 'a')
         redis.call('LTRIM', KEYS[5], 1, 0)
         redis.call('RPOPLPUSH', KEYS[6], KEYS[9])
         redis.call('HDEL', KEYS[7], 'f')
         redis.call('SREM', KEYS[8], 'm')
         return redis.call('EXISTS', KEYS[1], KEYS[2], KEYS[3], KEYS[4], KEYS[5], KEYS[6], KEYS[7], KEYS[8], KEYS[9])`,
        [k("z1"), k("z2"), k("z3"), k("l1"), k("l2"), k("l3"), k("h"), k("s"), k("dest")],
      );
      // Only the RPOPLPUSH destination exists.
      expect(reply).toBe(1);
      await r.zadd(k("z4"), 1, "a");
      await r.zrem(k("z4"), "a");
      expect(await r.exists(k("z4"))).toBe(0);
    });
  });

  describe("sorted sets", () => {
    const z = `${P}z`;
    beforeAll(async () => {
      await r.zadd(z, 1, "a", 1.5, "b", 2, "c", 2, "d", 10, "e", 6963200000005000, "f");
    });

    it("ranges by score with exclusive, infinite, fractional bounds and LIMIT", async () => {
      expect(await r.zrangebyscore(z, "(1", "2")).toEqual(["b", "c", "d"]);
      expect(await r.zrangebyscore(z, "1.2", "(2")).toEqual(["b"]);
      expect(await r.zrangebyscore(z, "-inf", "+inf", "LIMIT", 1, 2)).toEqual(["b", "c"]);
      expect(await r.zrangebyscore(z, "5", "+inf", "WITHSCORES")).toEqual(["e", "10", "f", "6963200000005000"]);
      expect(await r.zrevrangebyscore(z, "2", "-inf", "LIMIT", 0, 3)).toEqual(["d", "c", "b"]);
      expect(await r.zcount(z, "(1", "1e1")).toBe(4);
      expect(await lua("return redis.call('ZRANGEBYSCORE', KEYS[1], 0, 1.5)", [z])).toEqual(["a", "b"]);
    });

    it("ranges by rank, reports scores as Redis 7.0 does (%.17g) and counts by lex", async () => {
      expect(await r.zrange(z, 0, 1)).toEqual(["a", "b"]);
      expect(await r.zrange(z, -2, -1)).toEqual(["e", "f"]);
      expect(await r.zrevrange(z, 0, 0, "WITHSCORES")).toEqual(["f", "6963200000005000"]);
      expect(await r.zscore(z, "b")).toBe("1.5");
      expect(await r.zscore(z, "missing")).toBeNull();
      await r.zadd(`${P}zf`, 0.1, "x");
      expect(await r.zscore(`${P}zf`, "x")).toBe("0.10000000000000001");
      await r.zadd(`${P}lex`, 0, "a", 0, "b", 0, "c", 0, "d");
      expect(await lua("return redis.call('ZLEXCOUNT', KEYS[1], '[b', '(d')", [`${P}lex`])).toBe(2);
      expect(await lua("return redis.call('ZLEXCOUNT', KEYS[1], '-', '+')", [`${P}lex`])).toBe(4);
      expect(await r.zrangebylex(`${P}lex`, "(a", "[c")).toEqual(["b", "c"]);
    });

    it("applies ZADD's NX, XX, GT, LT, CH and INCR options", async () => {
      const k = `${P}zaddopts`;
      expect(await r.zadd(k, 5, "a", 7, "b")).toBe(2);
      expect(await r.zadd(k, "NX", 1, "a", 2, "c")).toBe(1);
      expect(await r.zscore(k, "a")).toBe("5");
      expect(await r.zadd(k, "XX", "CH", 6, "a", 9, "new")).toBe(1);
      expect(await r.zscore(k, "new")).toBeNull();
      expect(await r.zadd(k, "GT", "CH", 4, "a", 8, "b")).toBe(1);
      expect(await r.zrange(k, 0, -1, "WITHSCORES")).toEqual(["c", "2", "a", "6", "b", "8"]);
      expect(await r.zadd(k, "LT", 10, "a")).toBe(0);
      expect(await r.zadd(k, "INCR", 0.5, "c")).toBe("2.5");
      expect(await r.zadd(k, "XX", "INCR", 1, "nope")).toBeNull();
      await expect(r.zadd(k, "NX", "XX", 1, "a")).rejects.toThrow(/XX and NX options at the same time are not compatible/);
      await expect(r.zadd(k, "x", "a")).rejects.toThrow(/not a valid float/);
      expect(await r.zrange(k, 0, 1, "REV")).toEqual(["b", "a"]);
      expect(await r.zremrangebyrank(k, 0, 0)).toBe(1);
      expect(await r.zrange(k, 0, -1)).toEqual(["a", "b"]);
    });

    it("pops the lowest score first, ties by member", async () => {
      const k = `${P}pop`;
      await r.zadd(k, 3, "x", 1, "b", 1, "a");
      expect(await r.zpopmin(k)).toEqual(["a", "1"]);
      expect(await lua("return redis.call('ZPOPMIN', KEYS[1])", [k])).toEqual(["b", "1"]);
      expect(await r.zcard(k)).toBe(1);
    });
  });

  describe("lists and hashes", () => {
    it("finds positions, trims and rotates lists", async () => {
      const k = `${P}list`;
      await r.rpush(k, "a", "b", "c", "b", "d");
      expect(await r.lpos(k, "b")).toBe(1);
      expect(await lua("return redis.call('LPOS', KEYS[1], 'b', 'RANK', -1)", [k])).toBe(3);
      expect(await lua("return redis.call('LPOS', KEYS[1], 'zz')", [k])).toBeNull();
      expect(await r.lrem(k, -1, "b")).toBe(1);
      expect(await r.lrange(k, 0, -1)).toEqual(["a", "b", "c", "d"]);
      expect(await r.rpoplpush(k, k)).toBe("d");
      expect(await r.lrange(k, 0, -1)).toEqual(["d", "a", "b", "c"]);
      expect(await r.lindex(k, -1)).toBe("c");
      await r.ltrim(k, 1, -1);
      expect(await r.lrange(k, 0, -1)).toEqual(["a", "b", "c"]);
    });

    it("moves, pops and sets list elements", async () => {
      const src = `${P}lm:src`;
      const dst = `${P}lm:dst`;
      await r.rpush(src, "1", "2", "3", "4");
      expect(await r.lmove(src, dst, "LEFT", "RIGHT")).toBe("1");
      expect(await r.lmove(src, dst, "RIGHT", "LEFT")).toBe("4");
      expect(await r.lrange(dst, 0, -1)).toEqual(["4", "1"]);
      expect(await r.lpop(src, 5)).toEqual(["2", "3"]);
      expect(await r.exists(src)).toBe(0);
      expect(await r.rpop(src)).toBeNull();
      await r.lset(dst, -1, "one");
      expect(await r.lrange(dst, -5, 10)).toEqual(["4", "one"]);
      await expect(r.lset(dst, 5, "x")).rejects.toThrow(/ERR index out of range/);
      expect(await r.lrange(dst, 3, 1)).toEqual([]);
    });

    it("increments hash fields and refuses non-integers", async () => {
      const k = `${P}hash`;
      expect(await r.hset(k, "n", "5", "s", "text")).toBe(2);
      expect(await r.hincrby(k, "n", 3)).toBe(8);
      expect(await r.hincrby(k, "new", -2)).toBe(-2);
      await expect(r.hincrby(k, "s", 1)).rejects.toThrow(/ERR hash value is not an integer/);
      expect(await lua("return redis.call('HMGET', KEYS[1], 'n', 'missing')", [k])).toEqual(["8", null]);
      await r.set(`${P}str`, "12");
      expect(await r.incrby(`${P}str`, 30)).toBe(42);
      await r.set(`${P}str2`, "1.5");
      await expect(r.incr(`${P}str2`)).rejects.toThrow(/ERR value is not an integer or out of range/);
    });
  });

  describe("strings, expiry and key space", () => {
    it("sets with NX and PX, expires keys and reports TTLs", async () => {
      const k = `${P}lock`;
      expect(await lua("return redis.call('SET', KEYS[1], 'token', 'PX', 150, 'NX')", [k])).toBe("OK");
      expect(await lua("return redis.call('SET', KEYS[1], 'other', 'PX', 150, 'NX')", [k])).toBeNull();
      const ttl = await r.pttl(k);
      expect(ttl).toBeGreaterThan(0);
      expect(ttl).toBeLessThanOrEqual(150);
      expect(await r.pttl(`${P}nokey`)).toBe(-2);
      await r.set(`${P}persistent`, "1");
      expect(await r.pttl(`${P}persistent`)).toBe(-1);
      await new Promise((res) => setTimeout(res, 200));
      expect(await r.exists(k)).toBe(0);
      expect(await lua("return redis.call('GET', KEYS[1])", [k])).toBeNull();
    });

    it("reports TYPE, TIME and the server version", async () => {
      await r.xadd(`${P}type:stream`, "*", "f", "v");
      await r.zadd(`${P}type:zset`, 1, "m");
      await r.hset(`${P}type:hash`, "f", "v");
      expect(await lua("return {redis.call('TYPE', KEYS[1]).ok, redis.call('TYPE', KEYS[2]).ok, redis.call('TYPE', KEYS[3]).ok, redis.call('TYPE', KEYS[4]).ok}", [`${P}type:stream`, `${P}type:zset`, `${P}type:hash`, `${P}type:none`])).toEqual(["stream", "zset", "hash", "none"]);
      const [seconds, micros] = (await lua("return redis.call('TIME')", [])) as string[];
      expect(seconds).toMatch(/^\d+$/);
      expect(micros).toMatch(/^\d+$/);
      expect(Number(micros)).toBeLessThan(1_000_000);
      expect(Math.abs(Number(seconds) * 1000 + Number(micros) / 1000 - Date.now())).toBeLessThan(2000);
      expect(await r.info("server")).toMatch(/^redis_version:\d+\.\d+\.\d+\r?$/m);
    });

    it("scans keys by pattern", async () => {
      await r.set(`${P}scan:a`, "1");
      await r.set(`${P}scan:b`, "2");
      const found: string[] = [];
      let cursor = "0";
      do {
        const [next, keys] = await r.scan(cursor, "MATCH", `${P}scan:*`, "COUNT", 100);
        cursor = next;
        found.push(...keys);
      } while (cursor !== "0");
      expect(found.sort()).toEqual([`${P}scan:a`, `${P}scan:b`]);
    });
  });

  describe("streams", () => {
    it("adds entries with increasing ids, trims, ranges and deletes", async () => {
      const k = `${P}stream`;
      expect(await r.xadd(k, "5-1", "event", "added")).toBe("5-1");
      expect(await r.xadd(k, "5-*", "event", "waiting")).toBe("5-2");
      await expect(r.xadd(k, "5-2", "event", "x")).rejects.toThrow(/equal or smaller than the target stream top item/);
      const auto = (await r.xadd(k, "*", "event", "active")) as string;
      expect(auto).toMatch(/^\d+-\d+$/);
      expect(Number(auto.split("-")[0])).toBeGreaterThan(1_600_000_000_000);
      expect(await r.xlen(k)).toBe(3);
      expect(await r.xrange(k, "-", "+", "COUNT", 2)).toEqual([
        ["5-1", ["event", "added"]],
        ["5-2", ["event", "waiting"]],
      ]);
      expect(await r.xrange(k, "(5-1", "5")).toEqual([["5-2", ["event", "waiting"]]]);
      expect(await r.xrevrange(k, "+", "-", "COUNT", 1)).toEqual([[auto, ["event", "active"]]]);
      expect(await r.xdel(k, "5-2", "9-9")).toBe(1);
      expect(await r.xtrim(k, "MAXLEN", 1)).toBe(1);
      expect(await r.xrange(k, "-", "+")).toEqual([[auto, ["event", "active"]]]);
      await r.xadd(k, "MAXLEN", "~", "1", "*", "event", "completed");
      expect(await r.xlen(k)).toBeGreaterThanOrEqual(1);
    });

    it("reads after an id, and XREAD BLOCK waits for a new entry or times out", async () => {
      const k = `${P}events`;
      await r.xadd(k, "1-1", "n", "1");
      await r.xadd(k, "1-2", "n", "2");
      expect(await r.xread("COUNT", 1, "STREAMS", k, "1-1")).toEqual([[k, [["1-2", ["n", "2"]]]]]);
      expect(await r.xread("STREAMS", k, "1-2")).toBeNull();
      const started = Date.now();
      expect(await other.xread("BLOCK", 150, "STREAMS", k, "$")).toBeNull();
      expect(Date.now() - started).toBeGreaterThanOrEqual(140);
      const waiting = other.xread("BLOCK", 5000, "STREAMS", k, "$");
      await new Promise((res) => setTimeout(res, 50));
      await r.xadd(k, "2-1", "n", "3");
      expect(await waiting).toEqual([[k, [["2-1", ["n", "3"]]]]]);
    });
  });

  describe("blocking pops", () => {
    it("BZPOPMIN returns at once, waits for a ZADD, and times out", async () => {
      const k = `${P}marker`;
      await r.zadd(k, 5, "m");
      expect(await other.bzpopmin(k, 1)).toEqual([k, "m", "5"]);
      const t0 = Date.now();
      expect(await other.bzpopmin(k, 0.1)).toBeNull();
      expect(Date.now() - t0).toBeGreaterThanOrEqual(90);
      const waiting = other.bzpopmin(k, 5);
      await new Promise((res) => setTimeout(res, 50));
      await lua("return redis.call('ZADD', KEYS[1], 0, '0')", [k]);
      expect(await waiting).toEqual([k, "0", "0"]);
      expect(await r.exists(k)).toBe(0);
    });

    it("serves blocked clients first come, first served", async () => {
      const k = `${P}fifo`;
      const third = createRedisConnection();
      const first = other.bzpopmin(k, 5);
      await new Promise((res) => setTimeout(res, 30));
      const second = third.bzpopmin(k, 5);
      await new Promise((res) => setTimeout(res, 30));
      await r.zadd(k, 1, "one");
      expect(await first).toEqual([k, "one", "1"]);
      await r.zadd(k, 2, "two");
      expect(await second).toEqual([k, "two", "2"]);
      await third.quit();
    });
  });
});

/**
 * The script bridge's conversion rules between Redis replies and Lua values, and the script
 * environment, checked on the fake and (with REDIS_URL) on a real redis-server.
 *
 * Sources: Redis documentation, "Lua API reference" (sections "RESP2 to Lua type conversion",
 * "Lua to RESP2 type conversion", "redis.error_reply", "redis.status_reply", "redis.setresp",
 * "redis.sha1hex") and "Scripting with Lua" (global variables, EVALSHA). Exact strings
 * (error texts, number formatting) were measured on redis-server 7.0.15.
 */
import type { Redis } from "ioredis";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { scriptRunner } from "../../../jobs/redis-fake";
import { LOG_LEVELS } from "../../../jobs/redis-fake";
import { backends, deleteKeys, evalBuffer, runPrefix } from "./backends";

const P = runPrefix("conversion");

describe.each(backends())("script conversions on $name", ({ connect }) => {
  let r: Redis;
  beforeAll(() => {
    r = connect();
  });
  afterAll(async () => {
    await deleteKeys(r, P);
    await r.quit();
  });

  const ev = (script: string, keys: string[] = [], args: (string | number | Buffer)[] = []) =>
    r.eval(script, keys.length, ...keys, ...args);

  describe("Redis to Lua (RESP2)", () => {
    it("turns a null bulk reply into false, not nil", async () => {
      expect(await ev("return {type(redis.call('GET', KEYS[1])), tostring(redis.call('GET', KEYS[1]) == false)}", [`${P}missing`])).toEqual([
        "boolean",
        "true",
      ]);
    });

    it("turns an integer reply into a number and a bulk reply into a string", async () => {
      await r.set(`${P}s`, "abc");
      expect(await ev("return {type(redis.call('INCR', KEYS[1])), type(redis.call('GET', KEYS[2]))}", [`${P}n`, `${P}s`])).toEqual([
        "number",
        "string",
      ]);
    });

    it("turns a status reply into a table with an ok field", async () => {
      expect(await ev("local r = redis.call('SET', KEYS[1], 'v') return {type(r), r.ok}", [`${P}st`])).toEqual(["table", "OK"]);
      expect(await ev("return redis.call('TYPE', KEYS[1]).ok", [`${P}st`])).toBe("string");
      expect(await ev("return redis.call('PING').ok")).toBe("PONG");
    });

    it("turns an error reply into a table with an err field under redis.pcall", async () => {
      await r.set(`${P}text`, "abc");
      expect(await ev("local r = redis.pcall('INCR', KEYS[1]) return {type(r), r.err}", [`${P}text`])).toEqual([
        "table",
        "ERR value is not an integer or out of range",
      ]);
    });

    it("raises the error reply under redis.call; Lua's pcall sees its message as a string", async () => {
      await r.set(`${P}text2`, "abc");
      await expect(ev("return redis.call('INCR', KEYS[1])", [`${P}text2`])).rejects.toThrow(
        /^ERR value is not an integer or out of range script: [0-9a-f]{40}, on @user_script:1\.$/,
      );
      expect(await ev("local ok, e = pcall(redis.call, 'INCR', KEYS[1]) return {tostring(ok), type(e), e}", [`${P}text2`])).toEqual([
        "false",
        "string",
        "ERR value is not an integer or out of range",
      ]);
    });

    it("turns a multi-bulk reply into a 1-based table, nested replies included", async () => {
      await r.rpush(`${P}list`, "a", "b", "c");
      expect(await ev("local t = redis.call('LRANGE', KEYS[1], 0, -1) return {#t, t[1], t[3]}", [`${P}list`])).toEqual([3, "a", "c"]);
      await r.xadd(`${P}stream`, "1-1", "f", "v");
      expect(await ev("local t = redis.call('XRANGE', KEYS[1], '-', '+') return {t[1][1], t[1][2][1], t[1][2][2]}", [`${P}stream`])).toEqual([
        "1-1",
        "f",
        "v",
      ]);
    });

    it("rejects unknown commands and commands not allowed in scripts", async () => {
      await expect(ev("return redis.call('NOSUCHCOMMAND')")).rejects.toThrow(/^ERR Unknown Redis command called from script/);
      await expect(ev("return redis.call('EVAL', 'return 1', 0)")).rejects.toThrow(/^ERR This Redis command is not allowed from script/);
    });
  });

  describe("Lua to Redis (RESP2)", () => {
    it("truncates numbers to integers toward zero", async () => {
      expect(await ev("return 3.99")).toBe(3);
      expect(await ev("return -3.99")).toBe(-3);
      expect(await ev("return {1.5, 2.7}")).toEqual([1, 2]);
    });

    it("stops an array at the first nil", async () => {
      expect(await ev("return {1, 2, 3, nil, 5}")).toEqual([1, 2, 3]);
    });

    it("turns true into 1 and false/nil into a null reply", async () => {
      expect(await ev("return true")).toBe(1);
      expect(await ev("return false")).toBeNull();
      expect(await ev("return nil")).toBeNull();
      expect(await ev("return {1.5, true, false, 'x'}")).toEqual([1, 1, null, "x"]);
    });

    it("turns an err table into an error reply and an ok table into a status reply", async () => {
      await expect(ev("return {err = 'lower case thing'}")).rejects.toThrow(/^lower case thing$/);
      expect(await ev("return {ok = 'FINE'}")).toBe("FINE");
      expect(await ev("return {ok = 'a\\r\\nb'}")).toBe("a  b");
    });

    it("returns an error nested in an array as an error element", async () => {
      const reply = (await ev("return {1, {err = 'inner'}, 3}")) as unknown[];
      expect(reply[0]).toBe(1);
      expect(reply[1]).toBeInstanceOf(Error);
      expect((reply[1] as Error).message).toBe("inner");
      expect(reply[2]).toBe(3);
    });

    it("formats a double table as %.17g", async () => {
      expect(await ev("return {double = 0.1}")).toBe("0.10000000000000001");
    });

    it("builds error_reply and status_reply tables like Redis 7", async () => {
      await expect(ev("return redis.error_reply('My err')")).rejects.toThrow(/^My err$/);
      await expect(ev("return redis.error_reply('NOCODE')")).rejects.toThrow(/^ERR NOCODE$/);
      await expect(ev("return redis.error_reply('-WRONG thing')")).rejects.toThrow(/^WRONG thing$/);
      await expect(ev("return redis.error_reply(3)")).rejects.toThrow(/^ERR wrong number or type of arguments$/);
      expect(await ev("return redis.status_reply('FINE')")).toBe("FINE");
    });

    it("reports uncaught errors with the script's sha and line", async () => {
      await expect(ev("local a = 1\nerror('custom')")).rejects.toThrow(/^ERR user_script:2: custom script: [0-9a-f]{40}, on @user_script:2\.$/);
      await expect(ev("error({err = 'MYCODE custom'})")).rejects.toThrow(/^MYCODE custom script: [0-9a-f]{40}, on @user_script:1\.$/);
    });
  });

  describe("command arguments", () => {
    it("passes numbers as %.17g strings, integers in full", async () => {
      const k = `${P}num`;
      expect(await ev("redis.call('SET', KEYS[1], 0.1) return redis.call('GET', KEYS[1])", [k])).toBe("0.10000000000000001");
      expect(await ev("redis.call('SET', KEYS[1], 1700000000123) return redis.call('GET', KEYS[1])", [k])).toBe("1700000000123");
      expect(await ev("redis.call('SET', KEYS[1], 1e20) return redis.call('GET', KEYS[1])", [k])).toBe("1e+20");
      expect(await ev("redis.call('SET', KEYS[1], -2.5) return redis.call('GET', KEYS[1])", [k])).toBe("-2.5");
    });

    it("rejects other argument types and empty calls", async () => {
      await expect(ev("return redis.call('SET', KEYS[1], true)", [`${P}bad`])).rejects.toThrow(
        /^ERR Lua redis lib command arguments must be strings or integers script:/,
      );
      await expect(ev("return redis.call()")).rejects.toThrow(/^ERR Please specify at least one argument for this redis lib call script:/);
      expect(await ev("return redis.pcall('SET', KEYS[1], {}).err", [`${P}bad`])).toBe(
        "ERR Lua redis lib command arguments must be strings or integers",
      );
    });

    it("hands KEYS and ARGV over byte for byte, invalid UTF-8 included", async () => {
      const bytes = Buffer.from([0xff, 0x00, 0xc1, 0x80, 0x41, 0xe2, 0x82]);
      const reply = await evalBuffer(r, "return {#ARGV[1], ARGV[1], KEYS[1]}", 1, `${P}k\u00e9`, bytes);
      expect(reply).toEqual([7, bytes, Buffer.from(`${P}k\u00e9`)]);
      const k = `${P}bin`;
      await evalBuffer(r, "return redis.call('SET', KEYS[1], ARGV[1])", 1, k, bytes);
      expect(await r.getBuffer(k)).toEqual(bytes);
      expect(await evalBuffer(r, "return redis.call('GET', KEYS[1])", 1, k)).toEqual(bytes);
    });
  });

  describe("the Lua 5.1 environment", () => {
    it("prints numbers as Lua 5.1 does (%.14g) through tostring and tonumber", async () => {
      expect(await ev("return {tostring(7/7), tostring(1e15), tostring(0.1), tostring(3/2)}")).toEqual(["1", "1e+15", "0.1", "1.5"]);
      expect(await ev("return 'repeat:' .. tonumber('1700000000123')")).toBe("repeat:1700000000123");
      expect(await ev("return 'at ' .. tonumber(ARGV[1]) + 1", [], ["1700000000123"])).toBe("at 1700000000124");
    });

    it("has the Lua 5.1 names scripts use", async () => {
      expect(await ev("return {unpack({1, 2, 3})}")).toEqual([1, 2, 3]);
      expect(await ev("return table.getn({1, 2})")).toBe(2);
      expect(await ev("return math.pow(2, 10)")).toBe(1024);
      expect(await ev("return type(loadstring)")).toBe("function");
    });

    it("refuses to read unknown globals and to write any global", async () => {
      await expect(ev("return x")).rejects.toThrow(/^ERR user_script:1: Script attempted to access nonexistent global variable 'x' script:/);
      await expect(ev("y = 1")).rejects.toThrow(/^ERR user_script:1: Attempt to modify a readonly table script:/);
      await expect(ev("return os.time()")).rejects.toThrow(/nonexistent global variable 'os'/);
    });

    it("exposes redis.sha1hex and the version constants", async () => {
      // SHA-1 of the empty string (FIPS 180-4 test vectors: da39a3ee5e6b4b0d3255bfef95601890afd80709).
      expect(await ev("return redis.sha1hex('')")).toBe("da39a3ee5e6b4b0d3255bfef95601890afd80709");
      expect(await ev("return redis.sha1hex('abc')")).toBe("a9993e364706816aba3e25717850c26c9cd0d89d");
      expect(await ev("return {redis.LOG_DEBUG, redis.LOG_VERBOSE, redis.LOG_NOTICE, redis.LOG_WARNING}")).toEqual([0, 1, 2, 3]);
      expect(await ev("return type(redis.REDIS_VERSION) .. type(redis.REDIS_VERSION_NUM)")).toBe("stringnumber");
    });

    it("validates redis.log and redis.setresp arguments", async () => {
      await expect(ev("return redis.log(7, 'x')")).rejects.toThrow(/^ERR Invalid debug level\. script:/);
      await expect(ev("redis.setresp(4)")).rejects.toThrow(/^ERR RESP version must be 2 or 3\. script:/);
      expect(await ev("return redis.log(redis.LOG_WARNING, 'a', 'b')")).toBeNull();
    });
  });

  describe("RESP3 inside a script (redis.setresp(3))", () => {
    it("gives nil for null replies and map/set/double tables", async () => {
      const h = `${P}h`;
      const s = `${P}set`;
      const z = `${P}z`;
      await r.hset(h, "a", "1");
      await r.sadd(s, "x");
      await r.zadd(z, "1.5", "m");
      expect(await ev("redis.setresp(3) return type(redis.call('GET', KEYS[1]))", [`${P}none`])).toBe("nil");
      expect(await ev("redis.setresp(3) return redis.call('HGETALL', KEYS[1]).map.a", [h])).toBe("1");
      expect(await ev("redis.setresp(3) return tostring(redis.call('SMEMBERS', KEYS[1]).set.x)", [s])).toBe("true");
      expect(await ev("redis.setresp(3) local r = redis.call('ZSCORE', KEYS[1], 'm') return tostring(r.double)", [z])).toBe("1.5");
      expect(await ev("redis.setresp(3) return false")).toBe(0);
      expect(await ev("redis.setresp(3) return {map = {a = 1}}")).toEqual(["a", 1]);
    });
  });

  describe("script cache", () => {
    it("runs a loaded script by sha and answers NOSCRIPT for an unknown one", async () => {
      const sha = (await r.script("LOAD", "return 'cached'")) as string;
      // SHA-1 of the script text, as EVALSHA expects.
      expect(sha).toBe("952f49ffc8f7b098d8ab5da45d3164ca36ed18b1");
      expect(await r.evalsha(sha, 0)).toBe("cached");
      expect(await r.script("EXISTS", sha, "0000000000000000000000000000000000000000")).toEqual([1, 0]);
      await expect(r.evalsha("0000000000000000000000000000000000000000", 0)).rejects.toThrow(/^NOSCRIPT No matching script/);
    });

    it("reports compile errors", async () => {
      await expect(ev("return x x")).rejects.toThrow(/^ERR Error compiling script \(new function\): user_script:1: /);
    });

    it("runs defineCommand scripts with a fixed number of keys", async () => {
      r.defineCommand("lissomAppend", { numberOfKeys: 1, lua: "return redis.call('APPEND', KEYS[1], ARGV[1])" });
      const cmd = (r as unknown as Record<string, (...a: string[]) => Promise<number>>).lissomAppend.bind(r);
      expect(await cmd(`${P}app`, "ab")).toBe(2);
      expect(await cmd(`${P}app`, "cd")).toBe(4);
      expect(await r.get(`${P}app`)).toBe("abcd");
    });
  });

  describe("atomicity", () => {
    it("never interleaves two scripts: read-modify-write from many connections loses no update", async () => {
      const k = `${P}counter`;
      const script = "local v = tonumber(redis.call('GET', KEYS[1]) or '0') redis.call('SET', KEYS[1], v + 1) return v + 1";
      const clients = [r, r.duplicate(), r.duplicate(), r.duplicate()];
      const calls: Promise<unknown>[] = [];
      for (let i = 0; i < 200; i++) calls.push(clients[i % clients.length].eval(script, 1, k));
      const replies = (await Promise.all(calls)) as number[];
      expect(new Set(replies).size).toBe(200);
      expect(await r.get(k)).toBe("200");
      await Promise.all(clients.slice(1).map((c) => c.quit()));
    });
  });
});

describe("script engine (fake only)", () => {
  it("sends redis.log lines to the log sink", async () => {
    const lines: [number, string][] = [];
    scriptRunner().logSink = (level, message) => lines.push([level, message]);
    const { createFakeRedis } = await import("../../../jobs/redis-fake");
    const r = createFakeRedis();
    await r.eval("redis.log(redis.LOG_NOTICE, 'fitted', 12, 'features')", 0);
    scriptRunner().logSink = undefined;
    expect(lines).toEqual([[LOG_LEVELS.LOG_NOTICE, "fitted 12 features"]]);
    await r.quit();
  });

  it("keeps one compiled function per script", () => {
    const sha1 = scriptRunner().load("return 'one'");
    const sha2 = scriptRunner().load("return 'one'");
    expect(sha1).toBe(sha2);
    expect(scriptRunner().exists(sha1)).toBe(true);
  });
});

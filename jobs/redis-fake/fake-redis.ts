/**
 * `FakeRedis`: ioredis-mock 8.13.1 with a real script engine and the commands BullMQ needs,
 * so BullMQ runs unchanged on an in-memory Redis.
 *
 * Contract (what a real Redis 7 connection through ioredis gives, and the contract suite in
 * tests/integration/queue/ checks against redis-server 7.0.15):
 * - `defineCommand`, EVAL, EVALSHA and SCRIPT LOAD/EXISTS/FLUSH run Lua through
 *   `script-runner.ts` (Lua 5.4 made to look like Redis's 5.1, cjson, cmsgpack, bit, struct,
 *   the `redis` library and Redis's conversion rules), atomically: a script and every command
 *   it calls run synchronously, nothing else can interleave.
 * - Connections built with the same host/port/db share one data space (as ioredis-mock does),
 *   kept in a `KeySpace` (store.ts) that replaces ioredis-mock's copying store;
 *   `duplicate()` returns another FakeRedis on the same data.
 * - `status` follows ioredis ("wait" with lazyConnect, "ready", "end" after quit/disconnect);
 *   `connect()` after a disconnect works again, as BullMQ's reconnect of blocking clients needs.
 * - BZPOPMIN/BZPOPMAX and XREAD BLOCK really block: they wait until a write to one of their
 *   keys can serve them (first come, first served) or until their timeout (0 = forever), and
 *   are rejected with "Connection is closed." when the connection is disconnected. Inside a
 *   script they never block, as in Redis.
 * - Streams (XADD, XLEN, XRANGE, XREVRANGE, XDEL, XTRIM, XREAD) per `streams.ts`; TYPE knows
 *   them.
 * - Sorted sets and lists per `collections.ts` (ordered by score then member bytes, scores
 *   replied as Redis 7.0's "%.17g", score ranges with any float syntax, emptied keys deleted).
 * - Other fixes to ioredis-mock where BullMQ depends on Redis's behaviour: INCR/INCRBY/DECR/
 *   DECRBY/HINCRBY refuse non-integers and overflow, GET inside a script returns the stored
 *   bytes, FLUSHALL/FLUSHDB also forget expiry times, TIME gives seconds and microseconds of
 *   the clock, INFO gives redis_version and maxmemory_policy, CLIENT SETNAME/GETNAME/ID/LIST/
 *   INFO, and keys emptied by HDEL/SREM/SPOP/SMOVE are deleted.
 *
 * Not covered yet:
 * - Every command not listed keeps ioredis-mock's behaviour (see its compat.md), including
 *   its WRONGTYPE checks, which are partial.
 * - Pub/sub, WATCH and keyspace notifications are ioredis-mock's; consumer groups, FUNCTION,
 *   ACL, cluster and replication are absent.
 * - Commands sent on one connection are not queued behind a blocking command of that same
 *   connection (Redis would serve them after it); BullMQ uses a dedicated blocking connection.
 * - Nothing is persisted: the data lives as long as the process.
 */
import { EventEmitter } from "node:events";
import RedisMock from "ioredis-mock";
import { normalizeError, ReplyError, ScriptRunner, UnknownCommandError, type CommandArg, type ScriptHost } from "./script-runner";
import { EMULATED_REDIS_VERSION } from "./script-runner";
import { collectionCommands, popExtreme, WRONGTYPE } from "./collections";
import { KeySpace, type SharedExpires } from "./store";
import {
  appendEntry,
  deleteEntries,
  entriesAfter,
  entryReply,
  isStoredStream,
  parseId,
  parseTrim,
  parseXadd,
  parseXread,
  rangeEntries,
  StreamState,
  trimStream,
  type StreamId,
} from "./streams";

// ---------------------------------------------------------------- ioredis-mock internals

/** The parts of an ioredis-mock instance the fake uses. */
interface MockData {
  get(key: string): unknown;
  set(key: string, value: unknown): void;
  has(key: string): boolean;
  delete(key: string): void;
  keys(): string[];
  clear(): void;
}
interface MockContext {
  modifiedKeyEvents: EventEmitter;
  expires: SharedExpires;
}
interface MockInstance extends EventEmitter {
  data: MockData;
  expires: { delete(key: string): void; has(key: string): boolean; get(key: string): number | undefined; clear(): void };
  context: MockContext;
  keyData: string;
  connected: boolean;
  options: Record<string, unknown> & { lazyConnect?: boolean };
  customCommands: Record<string, (...args: unknown[]) => unknown>;
  disconnect(): void;
  _signalModifiedKey(key: string): void;
}
type MockConstructor = new (options?: Record<string, unknown>) => MockInstance;
const Mock = RedisMock as unknown as MockConstructor & {
  Pipeline: new (redis: unknown) => unknown;
};

type Emulator = (this: FakeRedis, ...args: CommandArg[]) => unknown;

/**
 * ioredis-mock's raw, synchronous command emulators (it only exports them wrapped in
 * promises). Its Pipeline copies every emulator through `_createCommand`; a subclass that
 * records them instead gets the originals without touching the package.
 */
const MOCK_EMULATORS: Record<string, Emulator> = (() => {
  const captured: Record<string, Emulator> = {};
  const Base = Mock.Pipeline as unknown as new (redis: unknown) => object;
  class Capture extends Base {
    _createCommand(name: string, fn: Emulator): () => void {
      captured[name] = fn;
      return () => undefined;
    }
  }
  new Capture({ customCommands: {} });
  return captured;
})();

// ---------------------------------------------------------------- shared state per data space

interface Waiter {
  keys: string[];
  /** Tries to serve the blocked call; true when it is done. */
  attempt(): boolean;
  /** Ends the wait with an error (the connection closed). */
  abort(err: Error): void;
}

class DataSpace {
  readonly waiters = new Map<string, Set<Waiter>>();
  readonly clients = new Set<FakeRedis>();
  readonly keyspace: KeySpace;
  private readonly pending = new Set<string>();
  private scheduled = false;

  constructor(events: EventEmitter, expires: SharedExpires) {
    this.keyspace = new KeySpace(expires, events);
    events.setMaxListeners(0);
    events.on("modified", (key: string) => {
      if (!this.waiters.has(key)) return;
      this.pending.add(key);
      if (this.scheduled) return;
      this.scheduled = true;
      // Served after the current command, transaction or script has finished, as in Redis.
      setImmediate(() => this.serve());
    });
  }

  private serve(): void {
    this.scheduled = false;
    const keys = [...this.pending];
    this.pending.clear();
    for (const key of keys) {
      const set = this.waiters.get(key);
      if (!set) continue;
      for (const w of [...set]) w.attempt();
    }
  }

  add(w: Waiter): void {
    for (const key of w.keys) {
      let set = this.waiters.get(key);
      if (!set) this.waiters.set(key, (set = new Set()));
      set.add(w);
    }
  }

  remove(w: Waiter): void {
    for (const key of w.keys) {
      const set = this.waiters.get(key);
      if (!set) continue;
      set.delete(w);
      if (set.size === 0) this.waiters.delete(key);
    }
  }
}

const spaces = new Map<string, DataSpace>();
let nextClientId = 1;

let runner: ScriptRunner | undefined;
/** The process-wide script engine (one Lua VM, scripts compiled once). */
export function scriptRunner(): ScriptRunner {
  runner ??= new ScriptRunner();
  return runner;
}

// ---------------------------------------------------------------- helpers


function flattenArgs(args: unknown[]): CommandArg[] {
  const out: CommandArg[] = [];
  const push = (a: unknown) => {
    if (a === null || a === undefined) out.push("");
    else if (Buffer.isBuffer(a)) out.push(a);
    else if (a instanceof Uint8Array) out.push(Buffer.from(a));
    else out.push(String(a));
  };
  for (const a of args) {
    if (Array.isArray(a)) for (const b of a) push(b);
    else push(a);
  }
  return out;
}

/** Errors from commands reach callers as ioredis's ReplyError ("CODE message"), as from a server. */
function asReplyError(err: unknown): unknown {
  if (!(err instanceof Error) || err.name === "ReplyError" || err.message === "Connection is closed.") return err;
  return new ReplyError(normalizeError(err));
}

function toBuffers(value: unknown): unknown {
  if (typeof value === "string") return Buffer.from(value);
  if (Array.isArray(value)) return value.map(toBuffers);
  return value;
}

function parseTimeoutSeconds(text: CommandArg): number {
  const t = Number(String(text));
  if (!Number.isFinite(t)) throw new Error("ERR timeout is not a float or out of range");
  if (t < 0) throw new Error("ERR timeout is negative");
  return t;
}

const EMPTYABLE: Record<string, (args: CommandArg[]) => CommandArg[]> = {
  zrem: (a) => [a[0]],
  zremrangebyscore: (a) => [a[0]],
  zremrangebyrank: (a) => [a[0]],
  zremrangebylex: (a) => [a[0]],
  zpopmin: (a) => [a[0]],
  zpopmax: (a) => [a[0]],
  lrem: (a) => [a[0]],
  ltrim: (a) => [a[0]],
  lpop: (a) => [a[0]],
  rpop: (a) => [a[0]],
  rpoplpush: (a) => [a[0]],
  lmove: (a) => [a[0]],
  spop: (a) => [a[0]],
  smove: (a) => [a[0]],
  hdel: (a) => [a[0]],
  srem: (a) => [a[0]],
};

function isEmptyContainer(v: unknown): boolean {
  if (v === undefined) return false;
  if (Array.isArray(v)) return v.length === 0;
  if (v instanceof Map || v instanceof Set) return v.size === 0;
  if (v && typeof v === "object" && !Buffer.isBuffer(v) && !isStoredStream(v)) return Object.keys(v).length === 0;
  return false;
}

const NOT_IN_SCRIPTS = new Set([
  "eval",
  "evalsha",
  "eval_ro",
  "evalsha_ro",
  "script",
  "multi",
  "exec",
  "discard",
  "watch",
  "unwatch",
  "subscribe",
  "psubscribe",
  "unsubscribe",
  "punsubscribe",
  "monitor",
  "quit",
  "connect",
  "defineCommand",
]);

// ---------------------------------------------------------------- the connection

export interface FakeRedisOptions {
  host?: string;
  port?: number;
  db?: number;
  lazyConnect?: boolean;
  enableOfflineQueue?: boolean;
  maxRetriesPerRequest?: number | null;
  connectionName?: string;
  [option: string]: unknown;
}

export class FakeRedis extends (Mock as MockConstructor) {
  /** ioredis's connection status. */
  status: "wait" | "ready" | "end" = "ready";
  readonly clientId = nextClientId++;
  private clientName: string | null;
  private readonly createdAt = Date.now();
  private readonly blocked = new Set<Waiter>();
  private readonly space: DataSpace;
  readonly keyspace: KeySpace;
  private readonly overrides: Record<string, Emulator>;

  constructor(options: FakeRedisOptions = {}) {
    super(options);
    this.status = this.connected ? "ready" : "wait";
    this.clientName = typeof options.connectionName === "string" ? options.connectionName : null;
    let space = spaces.get(this.keyData);
    if (!space) spaces.set(this.keyData, (space = new DataSpace(this.context.modifiedKeyEvents, this.context.expires)));
    this.space = space;
    this.keyspace = space.keyspace;
    this.data = space.keyspace;
    const initial = (options.data ?? {}) as Record<string, unknown>;
    for (const [key, value] of Object.entries(initial)) this.keyspace.set(key, value);
    if (this.connected) space.clients.add(this);
    this.overrides = OVERRIDES;
    const self = this as unknown as Record<string, unknown>;
    const install = (name: string, fn: (...args: unknown[]) => Promise<unknown>) => {
      self[name] = fn;
      this.customCommands[name] = fn;
    };
    for (const [name, impl] of Object.entries(OVERRIDES)) {
      install(name, this.wrap(name, impl, false));
      install(`${name}Buffer`, this.wrap(name, BUFFER_OVERRIDES[name] ?? impl, !BUFFER_OVERRIDES[name]));
    }
    for (const name of Object.keys(EMPTYABLE)) {
      if (OVERRIDES[name] || !MOCK_EMULATORS[name]) continue;
      install(name, this.wrap(name, MOCK_EMULATORS[name], false));
      install(`${name}Buffer`, this.wrap(name, MOCK_EMULATORS[name], true));
    }
    self.defineCommand = this.defineScriptCommand.bind(this);
    self.connect = this.reconnect.bind(this);
  }

  /** A promise-returning command, run synchronously at call time like ioredis-mock's own. */
  private wrap(name: string, impl: Emulator, buffers: boolean): (...args: unknown[]) => Promise<unknown> {
    return (...args: unknown[]) => {
      const last = args[args.length - 1];
      const callback = typeof last === "function" ? (args.pop() as (err: unknown, value?: unknown) => void) : undefined;
      const flat = flattenArgs(args);
      const promise = new Promise<unknown>((resolve) => resolve(this.execute(name, impl, flat))).then(
        (v) => (buffers ? toBuffers(v) : v),
        (err) => {
          throw asReplyError(err);
        },
      );
      if (callback) promise.then((v) => callback(null, v), (e) => callback(e));
      return promise;
    };
  }

  // ---- scripts

  private defineScriptCommand(name: string, definition: { numberOfKeys?: number | null; lua: string }): void {
    const sha = scriptRunner().load(definition.lua);
    const fixedKeys = definition.numberOfKeys;
    const make = (buffers: boolean) =>
      this.wrap(
        name,
        function (this: FakeRedis, ...args: CommandArg[]) {
          const numKeys = fixedKeys === null || fixedKeys === undefined ? Number(args.shift()) : fixedKeys;
          // After SCRIPT FLUSH ioredis would resend the source (EVAL after NOSCRIPT).
          if (!scriptRunner().exists(sha)) scriptRunner().load(definition.lua);
          return this.runScript(sha, numKeys, args, buffers);
        },
        false,
      );
    const self = this as unknown as Record<string, unknown>;
    self[name] = make(false);
    self[`${name}Buffer`] = make(true);
    this.customCommands[name] = self[name] as (...args: unknown[]) => unknown;
    this.customCommands[`${name}Buffer`] = self[`${name}Buffer`] as (...args: unknown[]) => unknown;
  }

  /** Runs a loaded script with `numKeys` keys taken from `args`. */
  runScript(sha: string, numKeys: number, args: CommandArg[], buffers: boolean): unknown {
    if (!Number.isInteger(numKeys)) throw new ReplyError("ERR value is not an integer or out of range");
    if (numKeys > args.length) throw new ReplyError("ERR Number of keys can't be greater than number of args");
    if (numKeys < 0) throw new ReplyError("ERR Number of keys can't be negative");
    return scriptRunner().run(sha, args.slice(0, numKeys), args.slice(numKeys), this.scriptHost, buffers);
  }

  private readonly scriptHost: ScriptHost = {
    callFromScript: (name, args) => this.callFromScript(name, args),
    knowsCommand: (name) => this.knowsCommand(name),
  };

  /** One command from inside a script: synchronous, never blocking. */
  private callFromScript(name: string, args: CommandArg[]): unknown {
    if (NOT_IN_SCRIPTS.has(name)) throw new Error("ERR This Redis command is not allowed from script");
    // GET is the one ioredis-mock emulator that decodes a stored Buffer to text; scripts
    // must see the bytes.
    const impl = name === "get" ? MOCK_EMULATORS.getBuffer : (this.overrides[name] ?? MOCK_EMULATORS[name]);
    if (!impl || name.endsWith("Buffer") || name === "evaluate") throw new UnknownCommandError();
    const result = this.execute(name, impl, args);
    if (result instanceof Promise) {
      result.catch(() => undefined);
      throw new Error("ERR This Redis command is not allowed from script");
    }
    return result;
  }

  /** Runs an emulator and applies the fixes that hold for every caller. */
  execute(name: string, impl: Emulator, args: CommandArg[]): unknown {
    const result = impl.apply(this, args);
    const touched = EMPTYABLE[name];
    if (touched) {
      for (const key of touched(args)) {
        const k = String(key);
        if (isEmptyContainer(this.keyspace.peek(k))) this.keyspace.delete(k);
      }
    }
    return result;
  }

  /** True when a command `name` exists for scripts. */
  knowsCommand(name: string): boolean {
    return Boolean(this.overrides[name] ?? MOCK_EMULATORS[name]);
  }

  // ---- connection lifecycle

  duplicate(override: FakeRedisOptions = {}): FakeRedis {
    return new FakeRedis({ ...this.options, ...override });
  }

  private reconnect(callback?: (err: unknown) => void): Promise<void> {
    const p = new Promise<void>((resolve, reject) => {
      if (this.connected) {
        reject(new Error("Redis is already connecting/connected"));
        return;
      }
      this.connected = true;
      this.status = "ready";
      this.space.clients.add(this);
      this.context.modifiedKeyEvents.on("modified", this._signalModifiedKey);
      process.nextTick(() => {
        this.emit("connect");
        this.emit("ready");
      });
      resolve();
    });
    if (callback) p.then(() => callback(null), callback);
    return p;
  }

  disconnect(): void {
    const wasOpen = this.status !== "end";
    if (wasOpen) process.nextTick(() => this.emit("close"));
    super.disconnect();
    this.status = "end";
    this.space.clients.delete(this);
    const closed = new Error("Connection is closed.");
    for (const w of [...this.blocked]) w.abort(closed);
  }

  // ---- blocking

  /** Serves now if possible, else waits for writes to `keys` until `timeoutMs` (0 = forever). */
  block<R>(keys: string[], timeoutMs: number, tryServe: () => R | null): R | null | Promise<R | null> {
    const now = tryServe();
    if (now !== null || scriptRunner().running) return now;
    return new Promise<R | null>((resolve, reject) => {
      let timer: NodeJS.Timeout | undefined;
      const finish = () => {
        if (timer) clearTimeout(timer);
        this.space.remove(waiter);
        this.blocked.delete(waiter);
      };
      const waiter: Waiter = {
        keys,
        attempt: () => {
          let served: R | null;
          try {
            served = tryServe();
          } catch (err) {
            finish();
            reject(err);
            return true;
          }
          if (served === null) return false;
          finish();
          resolve(served);
          return true;
        },
        abort: (err) => {
          finish();
          reject(err);
        },
      };
      this.space.add(waiter);
      this.blocked.add(waiter);
      if (timeoutMs > 0) {
        timer = setTimeout(() => {
          finish();
          resolve(null);
        }, timeoutMs);
      }
    });
  }

  // ---- client bookkeeping

  clientLine(): string {
    const age = Math.floor((Date.now() - this.createdAt) / 1000);
    const db = Number(this.options.db ?? 0);
    return `id=${this.clientId} addr=127.0.0.1:${40000 + (this.clientId % 20000)} laddr=127.0.0.1:${this.options.port ?? 6379} fd=${this.clientId + 7} name=${this.clientName ?? ""} age=${age} idle=0 flags=N db=${db} sub=0 psub=0 ssub=0 multi=-1 qbuf=0 qbuf-free=0 argv-mem=0 multi-mem=0 rbs=0 rbp=0 obl=0 oll=0 omem=0 tot-mem=0 events=r cmd=client|list user=default redir=-1 resp=2`;
  }

  clientCommand(sub: CommandArg, ...args: CommandArg[]): unknown {
    switch (String(sub).toUpperCase()) {
      case "SETNAME": {
        const name = String(args[0] ?? "");
        if (/[\s]/.test(name)) throw new Error("ERR Client names cannot contain spaces, newlines or special characters.");
        this.clientName = name === "" ? null : name;
        return "OK";
      }
      case "GETNAME":
        return this.clientName;
      case "ID":
        return this.clientId;
      case "INFO":
        return `${this.clientLine()}\n`;
      case "LIST":
        return [...this.space.clients].map((c) => `${c.clientLine()}\n`).join("");
      default:
        throw new Error(`ERR Unknown subcommand or wrong number of arguments for '${String(sub)}'. Try CLIENT HELP.`);
    }
  }

  // ---- streams

  streamAt(key: string, create: boolean): StreamState | null {
    const v = this.keyspace.peek(key);
    if (v === undefined) {
      if (!create) return null;
      const s = new StreamState();
      this.keyspace.put(key, { __stream: s });
      return s;
    }
    if (!isStoredStream(v)) throw new Error(WRONGTYPE);
    return v.__stream;
  }

  /** Stores a stream (new or changed) and signals the write to blocked readers and WATCH. */
  touch(key: string, s: StreamState): void {
    const v = this.keyspace.peek(key);
    if (isStoredStream(v) && v.__stream === s) this.keyspace.touched(key);
    else this.keyspace.put(key, { __stream: s });
  }
}

// ---------------------------------------------------------------- command overrides

function blockingPop(fake: FakeRedis, args: CommandArg[], max: boolean): unknown {
  if (args.length < 2) throw new Error(`ERR wrong number of arguments for '${max ? "bzpopmax" : "bzpopmin"}' command`);
  const timeout = parseTimeoutSeconds(args[args.length - 1]);
  const keys = args.slice(0, -1).map(String);
  return fake.block(keys, timeout * 1000, () => {
    for (const key of keys) {
      const popped = popExtreme(fake, key, 1, max);
      if (popped.length) return [key, popped[0], popped[1]];
    }
    return null;
  });
}

const INT64_MIN = -(2n ** 63n);
const INT64_MAX = 2n ** 63n - 1n;

/** Redis's string2ll: an optional "-", digits without leading zeros, within int64. */
function parseInt64(text: unknown): bigint | null {
  const s = text === undefined || text === null ? "" : String(text);
  if (!/^(0|-?[1-9][0-9]*)$/.test(s)) return null;
  const n = BigInt(s);
  return n < INT64_MIN || n > INT64_MAX ? null : n;
}

function incrementBy(fake: FakeRedis, key: CommandArg, increment: CommandArg | bigint): number {
  const k = String(key);
  const by = typeof increment === "bigint" ? increment : parseInt64(increment);
  if (by === null) throw new Error("ERR value is not an integer or out of range");
  const current = fake.data.has(k) ? fake.data.get(k) : "0";
  if (typeof current !== "string" && !Buffer.isBuffer(current)) throw new Error(WRONGTYPE);
  const value = parseInt64(String(current));
  if (value === null) throw new Error("ERR value is not an integer or out of range");
  const next = value + by;
  if (next < INT64_MIN || next > INT64_MAX) throw new Error("ERR increment or decrement would overflow");
  fake.data.set(k, next.toString());
  return Number(next);
}

const OVERRIDES: Record<string, Emulator> = {
  ...(collectionCommands as Record<string, Emulator>),
  // -- strings and hashes: ioredis-mock adds "abc" + 1 into NaN instead of refusing.
  incr(key) {
    return incrementBy(this, key, 1n);
  },
  decr(key) {
    return incrementBy(this, key, -1n);
  },
  incrby(key, increment) {
    return incrementBy(this, key, increment);
  },
  decrby(key, decrement) {
    const by = parseInt64(decrement);
    if (by === null) throw new Error("ERR value is not an integer or out of range");
    return incrementBy(this, key, -by);
  },
  hincrby(key, field, increment) {
    const k = String(key);
    const by = parseInt64(increment);
    if (by === null) throw new Error("ERR value is not an integer or out of range");
    const hash = this.data.has(k) ? this.data.get(k) : {};
    if (!hash || typeof hash !== "object" || Array.isArray(hash) || hash instanceof Map || hash instanceof Set || Buffer.isBuffer(hash) || isStoredStream(hash)) {
      throw new Error(WRONGTYPE);
    }
    const record = hash as Record<string, string | Buffer>;
    const f = String(field);
    const current = Object.prototype.hasOwnProperty.call(record, f) ? parseInt64(String(record[f])) : 0n;
    if (current === null) throw new Error("ERR hash value is not an integer");
    const next = current + by;
    if (next < INT64_MIN || next > INT64_MAX) throw new Error("ERR increment or decrement would overflow");
    record[f] = next.toString();
    this.data.set(k, record);
    return Number(next);
  },

  // -- sorted sets
  bzpopmin(...args) {
    return blockingPop(this, args, false);
  },
  bzpopmax(...args) {
    return blockingPop(this, args, true);
  },
  // -- streams
  xadd(key, ...args) {
    const plan = parseXadd(args);
    const k = String(key);
    const existing = this.streamAt(k, false);
    if (!existing && plan.noMkStream) return null;
    const s = existing ?? new StreamState();
    const id = appendEntry(s, plan.id, plan.fields, Date.now());
    if (plan.trim) trimStream(s, plan.trim);
    this.touch(k, s);
    return id;
  },
  xlen(key) {
    return this.streamAt(String(key), false)?.entries.length ?? 0;
  },
  xrange(key, start, end, ...rest) {
    return xrangeCommand(this, key, start, end, rest, false);
  },
  xrevrange(key, end, start, ...rest) {
    return xrangeCommand(this, key, start, end, rest, true);
  },
  xdel(key, ...ids) {
    const s = this.streamAt(String(key), false);
    if (!s) return 0;
    const n = deleteEntries(s, ids);
    if (n > 0) this.touch(String(key), s);
    return n;
  },
  xtrim(key, ...args) {
    const { plan } = parseTrim(args, 0);
    const s = this.streamAt(String(key), false);
    if (!s) return 0;
    const n = trimStream(s, plan);
    if (n > 0) this.touch(String(key), s);
    return n;
  },
  xread(...args) {
    const plan = parseXread(args);
    // "$" is fixed to the last id when the call starts.
    const after: StreamId[] = plan.keys.map((key, i) => {
      const text = plan.ids[i];
      if (text === "$") {
        const s = this.streamAt(key, false);
        return s ? { ms: s.lastMs, seq: s.lastSeq } : { ms: 0, seq: 0 };
      }
      return parseId(text, 0);
    });
    const serve = () => {
      const out: unknown[] = [];
      plan.keys.forEach((key, i) => {
        const s = this.streamAt(key, false);
        if (!s) return;
        const entries = entriesAfter(s, after[i], plan.count);
        if (entries.length) out.push([key, entries.map(entryReply)]);
      });
      return out.length ? out : null;
    };
    if (plan.block === null) return serve();
    return this.block(plan.keys, plan.block, serve);
  },
  type(key) {
    const k = String(key);
    if (!this.data.has(k)) return "none";
    const v = this.data.get(k);
    if (isStoredStream(v)) return "stream";
    return MOCK_EMULATORS.type.call(this, k);
  },

  // -- server
  flushall() {
    // ioredis-mock's FLUSHALL keeps the expiry times of the removed keys, which would then
    // expire new keys of the same names.
    this.data.clear();
    this.expires.clear();
    return "OK";
  },
  flushdb() {
    this.data.clear();
    this.expires.clear();
    return "OK";
  },
  time() {
    const micros = Math.floor((performance.timeOrigin + performance.now()) * 1000);
    return [String(Math.floor(micros / 1e6)), String(micros % 1e6)];
  },
  info(section) {
    const s = section === undefined ? "" : String(section).toLowerCase();
    const server = [
      "# Server",
      `redis_version:${EMULATED_REDIS_VERSION}`,
      "redis_mode:standalone",
      "os:in-memory (Lissom's Redis fake)",
      `process_id:${process.pid}`,
      `uptime_in_seconds:${Math.floor(process.uptime())}`,
    ];
    const memory = ["# Memory", `used_memory:${process.memoryUsage().heapUsed}`, "maxmemory:0", "maxmemory_policy:noeviction"];
    const clients = ["# Clients", `connected_clients:${[...spaces.values()].reduce((n, sp) => n + sp.clients.size, 0)}`];
    const parts: string[][] = [];
    if (s === "" || s === "all" || s === "default" || s === "everything" || s === "server") parts.push(server);
    if (s === "" || s === "all" || s === "default" || s === "everything" || s === "clients") parts.push(clients);
    if (s === "" || s === "all" || s === "default" || s === "everything" || s === "memory") parts.push(memory);
    return parts.map((p) => p.join("\r\n")).join("\r\n\r\n") + "\r\n";
  },
  client(sub, ...args) {
    return this.clientCommand(sub, ...args);
  },

  // -- scripting
  eval(source, numKeys, ...args) {
    const sha = scriptRunner().load(typeof source === "string" ? source : new Uint8Array(source));
    return this.runScript(sha, Number(numKeys), args, false);
  },
  evalsha(sha, numKeys, ...args) {
    return this.runScript(String(sha), Number(numKeys), args, false);
  },
  script(sub, ...args) {
    switch (String(sub).toUpperCase()) {
      case "LOAD":
        if (args.length !== 1) throw new ReplyError("ERR wrong number of arguments for 'script|load' command");
        return scriptRunner().load(typeof args[0] === "string" ? args[0] : new Uint8Array(args[0]));
      case "EXISTS":
        return args.map((sha) => (scriptRunner().exists(String(sha)) ? 1 : 0));
      case "FLUSH":
        scriptRunner().flush();
        return "OK";
      default:
        throw new ReplyError(`ERR unknown subcommand '${String(sub)}'. Try SCRIPT HELP.`);
    }
  },
};

/** Buffer variants that must build Buffers themselves (binary-safe), not convert strings. */
const BUFFER_OVERRIDES: Record<string, Emulator> = {
  eval(source, numKeys, ...args) {
    const sha = scriptRunner().load(typeof source === "string" ? source : new Uint8Array(source));
    return this.runScript(sha, Number(numKeys), args, true);
  },
  evalsha(sha, numKeys, ...args) {
    return this.runScript(String(sha), Number(numKeys), args, true);
  },
};

function xrangeCommand(fake: FakeRedis, key: CommandArg, start: CommandArg, end: CommandArg, rest: CommandArg[], reverse: boolean): unknown {
  let count: number | null = null;
  if (rest.length) {
    if (rest.length !== 2 || String(rest[0]).toUpperCase() !== "COUNT") throw new Error("ERR syntax error");
    count = Number(rest[1]);
    if (!Number.isInteger(count)) throw new Error("ERR value is not an integer or out of range");
    if (count < 0) count = null;
  }
  const s = fake.streamAt(String(key), false);
  if (!s) return [];
  return rangeEntries(s, String(start), String(end), count, reverse).map(entryReply);
}

/**
 * The script engine of the in-memory Redis: EVAL / EVALSHA / SCRIPT LOAD semantics on one
 * shared Lua VM per process, with compiled scripts cached by SHA-1.
 *
 * Contract (Redis 7 "Lua API reference" and "Scripting with Lua"; every rule below is checked
 * against redis-server 7.0.15 in tests/unit/redis-fake/conversion.test.ts):
 * - KEYS and ARGV are tables of byte strings; Buffers arrive byte for byte.
 * - `redis.call` arguments: strings as bytes, numbers as C "%.17g" (Lua 5.1 doubles), anything
 *   else is the error "Lua redis lib command arguments must be strings or integers".
 * - Redis to Lua (RESP2): integer -> number; bulk string -> string; null -> false; array ->
 *   table; status -> {ok = ...}; error -> raised ({err = ...} from `redis.pcall`).
 *   After `redis.setresp(3)`: null -> nil, HGETALL -> {map = ...}, SMEMBERS/SINTER/SUNION/
 *   SDIFF -> {set = ...}, ZSCORE/ZINCRBY -> {double = ...}.
 * - Lua to Redis: integer -> integer; float -> integer, fraction truncated; string -> bulk;
 *   true -> 1; false -> null (0 after setresp(3)); table with `err` -> error, with `ok` ->
 *   status, with `double` -> bulk "%.17g", with `map`/`set` -> flat array, otherwise an array
 *   that stops at the first nil; anything else -> null.
 * - A failing script rejects with "<error> script: <sha>, on @user_script:<line>.", an
 *   uncompilable one with "ERR Error compiling script (new function): ...".
 * - Scripts are atomic: a script runs to completion synchronously, calling the host's
 *   commands synchronously; a script can never start inside another one.
 * - `redis.sha1hex`, `redis.error_reply`, `redis.status_reply`, `redis.log` (to a sink the
 *   host sets), `redis.setresp`, `redis.set_repl`, `redis.replicate_commands`,
 *   `redis.breakpoint`, `redis.debug`, `redis.acl_check_cmd`, and the LOG_*, REPL_* and
 *   REDIS_VERSION constants.
 *
 * Not covered yet:
 * - RESP3 conversions beyond the ones listed (big numbers, verbatim strings, attribute and
 *   push replies, RESP3 shapes of WITHSCORES replies).
 * - Script flags (`#!lua flags=...`), FUNCTION/FCALL, SCRIPT KILL, script timeouts,
 *   `redis.setresp` affecting the caller's protocol (the fake's clients are always RESP2).
 * - The script cache is per process, shared by every data space in it.
 */
import { createHash } from "node:crypto";
import { ReplyError as IoredisReplyError } from "ioredis";
import { installCjson } from "./cjson";
import { installCmsgpack } from "./cmsgpack";
import { LuaRaise, LuaVm, T } from "./lua-vm";
import { formatG, formatLuaArgument } from "./number-format";
import { PRELUDE } from "./prelude";

/** The error class ioredis uses for error replies. */
export const ReplyError = IoredisReplyError as new (message: string) => Error;

export type CommandArg = string | Buffer;

/** The connection a script runs on. */
export interface ScriptHost {
  /** Runs one command synchronously against the host's data; throws on an error reply. */
  callFromScript(name: string, args: CommandArg[]): unknown;
  /** True when `name` (lower case) is a command the host implements. */
  knowsCommand(name: string): boolean;
}

/** Thrown by a host for a command it does not know. */
export class UnknownCommandError extends Error {
  constructor() {
    super("ERR Unknown Redis command called from script");
  }
}

/** Redis's LOG_* levels. */
export const LOG_LEVELS = { LOG_DEBUG: 0, LOG_VERBOSE: 1, LOG_NOTICE: 2, LOG_WARNING: 3 } as const;
export type ScriptLogSink = (level: number, message: string) => void;

/** The Redis version whose script behaviour the fake reproduces (Debian's redis-server). */
export const EMULATED_REDIS_VERSION = "7.0.15";
const EMULATED_REDIS_VERSION_NUM = (7 << 16) | (0 << 8) | 15;

const MAX_REPLY_DEPTH = 1000;

/** Commands whose string reply is a status reply ("+OK"), given the reply and arguments. */
function isStatusReply(name: string, args: CommandArg[], value: string): boolean {
  switch (name) {
    case "set":
    case "setex":
    case "psetex":
    case "mset":
    case "hmset":
    case "lset":
    case "ltrim":
    case "rename":
    case "flushdb":
    case "flushall":
    case "select":
    case "type":
    case "restore":
    case "swapdb":
    case "xsetid":
    case "pfmerge":
    case "save":
    case "bgsave":
    case "bgrewriteaof":
    case "debug":
      return true;
    case "ping":
      return args.length === 0;
    case "client":
    case "config":
    case "script":
    case "xgroup":
      return value === "OK";
    default:
      return false;
  }
}

const RESP3_SET_COMMANDS = new Set(["smembers", "sinter", "sunion", "sdiff"]);
const RESP3_DOUBLE_COMMANDS = new Set(["zscore", "zincrby"]);

interface Running {
  host: ScriptHost;
  resp: 2 | 3;
}

export class ScriptRunner {
  private readonly vm = new LuaVm();
  private readonly scripts = new Map<string, number>();
  private current: Running | undefined;
  /** Where `redis.log` lines go; by default nowhere, as a server log file is not kept. */
  logSink: ScriptLogSink | undefined;

  constructor() {
    installCjson(this.vm);
    installCmsgpack(this.vm);
    this.installRedis();
    this.vm.run(PRELUDE);
  }

  static sha1(source: string | Uint8Array): string {
    return createHash("sha1").update(source).digest("hex");
  }

  /** Compiles and caches `source`; returns its SHA-1. Throws a ReplyError if it does not compile. */
  load(source: string | Uint8Array): string {
    const sha = ScriptRunner.sha1(source);
    if (this.scripts.has(sha)) return sha;
    const L = this.vm.L;
    const bytes = typeof source === "string" ? new TextEncoder().encode(source) : source;
    try {
      this.vm.load(L, bytes, "@user_script");
    } catch (err) {
      throw new ReplyError(`ERR Error compiling script (new function): ${(err as Error).message}`);
    }
    this.scripts.set(sha, this.vm.ref(L));
    return sha;
  }

  exists(sha: string): boolean {
    return this.scripts.has(sha.toLowerCase());
  }

  flush(): void {
    for (const ref of this.scripts.values()) this.vm.unref(this.vm.L, ref);
    this.scripts.clear();
  }

  /** True while a script is executing (commands then must not block or start scripts). */
  get running(): boolean {
    return this.current !== undefined;
  }

  /**
   * Runs a loaded script. Returns the reply as ioredis would (numbers, strings or Buffers,
   * null, arrays); throws a ReplyError for an error reply.
   */
  run(sha: string, keys: CommandArg[], argv: CommandArg[], host: ScriptHost, buffers = false): unknown {
    const ref = this.scripts.get(sha.toLowerCase());
    if (ref === undefined) throw new ReplyError("NOSCRIPT No matching script. Please use EVAL.");
    if (this.current) throw new ReplyError("ERR This Redis command is not allowed from script");
    const vm = this.vm;
    const L = vm.L;
    const base = vm.top(L);
    this.current = { host, resp: 2 };
    try {
      this.setArgsGlobal("KEYS", keys);
      this.setArgsGlobal("ARGV", argv);
      vm.getGlobal(L, "__redis__err__handler");
      vm.pushRef(L, ref);
      const status = vm.pcall(L, 0, 1, base + 1);
      if (status !== 0) throw this.scriptError(sha);
      const reply = this.toReply(L, -1, buffers, 0);
      if (reply instanceof Error) throw reply;
      return reply;
    } finally {
      vm.setTop(L, base);
      this.current = undefined;
    }
  }

  private setArgsGlobal(name: string, values: CommandArg[]): void {
    const vm = this.vm;
    const L = vm.L;
    vm.newTable(L, values.length, 0);
    for (let i = 0; i < values.length; i++) {
      const v = values[i];
      if (typeof v === "string") vm.pushString(L, v);
      else vm.pushBytes(L, v);
      vm.rawSetI(L, -2, i + 1);
    }
    vm.setGlobal(L, name);
  }

  private scriptError(sha: string): Error {
    const vm = this.vm;
    const L = vm.L;
    let message: string;
    let where = "";
    if (vm.type(L, -1) === T.TABLE) {
      vm.rawGetField(L, -1, "err");
      message = vm.type(L, -1) === T.STRING || vm.type(L, -1) === T.NUMBER ? vm.toText(L, -1) : "ERR unknown error";
      vm.pop(L, 1);
      const hasSource = vm.rawGetField(L, -1, "source") === T.STRING;
      const source = hasSource ? vm.toText(L, -1) : "";
      vm.pop(L, 1);
      const hasLine = vm.rawGetField(L, -1, "line") === T.NUMBER;
      const line = hasLine ? String(vm.toInteger(L, -1)) : "";
      vm.pop(L, 1);
      if (hasSource && hasLine) where = `, on ${source}:${line}.`;
    } else {
      message = `ERR ${vm.toText(L, -1)}`;
    }
    return new ReplyError(`${message} script: ${sha}${where}`);
  }

  // ---------------------------------------------------------------- Lua -> reply

  private toReply(L: number, idx: number, buffers: boolean, depth: number): unknown {
    const vm = this.vm;
    if (depth > MAX_REPLY_DEPTH) return new ReplyError("ERR reached lua stack limit");
    const bulk = (s: string): string | Buffer => (buffers ? Buffer.from(s) : s);
    switch (vm.type(L, idx)) {
      case T.NUMBER: {
        if (vm.isInteger(L, idx)) return Number(vm.toInteger(L, idx));
        const d = vm.toNumber(L, idx);
        return Number.isFinite(d) ? Math.trunc(d) || 0 : -9223372036854775808;
      }
      case T.STRING:
        return buffers ? Buffer.from(vm.toBytes(L, idx)) : vm.toText(L, idx);
      case T.BOOLEAN:
        if (vm.toBoolean(L, idx)) return 1;
        return this.current?.resp === 3 ? 0 : null;
      case T.TABLE: {
        const t = vm.abs(L, idx);
        vm.ensureStack(L, 4);
        if (vm.rawGetField(L, t, "err") === T.STRING) {
          const msg = vm.toText(L, -1);
          vm.pop(L, 1);
          return new ReplyError(msg);
        }
        vm.pop(L, 1);
        if (vm.rawGetField(L, t, "ok") === T.STRING) {
          const status = vm.toText(L, -1).replace(/[\r\n]/g, " ");
          vm.pop(L, 1);
          return bulk(status);
        }
        vm.pop(L, 1);
        if (vm.rawGetField(L, t, "double") === T.NUMBER) {
          const d = vm.toNumber(L, -1);
          vm.pop(L, 1);
          return bulk(formatG(d, 17));
        }
        vm.pop(L, 1);
        if (vm.rawGetField(L, t, "map") === T.TABLE) {
          const out: unknown[] = [];
          const m = vm.top(L);
          vm.pushNil(L);
          while (vm.next(L, m)) {
            out.push(this.toReply(L, -2, buffers, depth + 1), this.toReply(L, -1, buffers, depth + 1));
            vm.pop(L, 1);
          }
          vm.pop(L, 1);
          return out;
        }
        vm.pop(L, 1);
        if (vm.rawGetField(L, t, "set") === T.TABLE) {
          const out: unknown[] = [];
          const s = vm.top(L);
          vm.pushNil(L);
          while (vm.next(L, s)) {
            out.push(this.toReply(L, -2, buffers, depth + 1));
            vm.pop(L, 1);
          }
          vm.pop(L, 1);
          return out;
        }
        vm.pop(L, 1);
        const out: unknown[] = [];
        for (let i = 1; ; i++) {
          if (vm.rawGetI(L, t, i) === T.NIL) {
            vm.pop(L, 1);
            break;
          }
          const item = this.toReply(L, -1, buffers, depth + 1);
          vm.pop(L, 1);
          if (item instanceof Error && item.message === "ERR reached lua stack limit") return item;
          out.push(item);
        }
        return out;
      }
      default:
        return null;
    }
  }

  // ---------------------------------------------------------------- reply -> Lua

  private pushCommandReply(L: number, value: unknown, name: string, args: CommandArg[]): void {
    const vm = this.vm;
    const resp = this.current?.resp ?? 2;
    if (typeof value === "string" && isStatusReply(name, args, value)) {
      vm.newTable(L, 0, 1);
      vm.pushString(L, value);
      vm.rawSetField(L, -2, "ok");
      return;
    }
    if (resp === 3) {
      if (name === "hgetall" && value && typeof value === "object" && !Array.isArray(value)) {
        vm.newTable(L, 0, 1);
        vm.newTable(L, 0, 0);
        for (const [k, v] of Object.entries(value as Record<string, unknown>)) {
          vm.pushString(L, k);
          this.pushValue(L, v, 3, 0);
          vm.rawSet(L, -3);
        }
        vm.rawSetField(L, -2, "map");
        return;
      }
      if (RESP3_SET_COMMANDS.has(name) && Array.isArray(value)) {
        vm.newTable(L, 0, 1);
        vm.newTable(L, 0, value.length);
        for (const member of value) {
          this.pushValue(L, member, 3, 0);
          vm.pushBoolean(L, true);
          vm.rawSet(L, -3);
        }
        vm.rawSetField(L, -2, "set");
        return;
      }
      if (RESP3_DOUBLE_COMMANDS.has(name) && value !== null && value !== undefined) {
        vm.newTable(L, 0, 1);
        vm.pushFloat(L, Number(value));
        vm.rawSetField(L, -2, "double");
        return;
      }
    }
    this.pushValue(L, value, resp, 0);
  }

  private pushValue(L: number, v: unknown, resp: 2 | 3, depth: number): void {
    const vm = this.vm;
    if (v === null || v === undefined) {
      if (resp === 3) vm.pushNil(L);
      else vm.pushBoolean(L, false);
      return;
    }
    switch (typeof v) {
      case "number":
        if (Number.isInteger(v)) vm.pushInteger(L, v);
        else vm.pushString(L, formatG(v, 17));
        return;
      case "bigint":
        vm.pushInteger(L, v);
        return;
      case "boolean":
        vm.pushInteger(L, v ? 1 : 0);
        return;
      case "string":
        vm.pushString(L, v);
        return;
    }
    if (v instanceof Uint8Array) {
      vm.pushBytes(L, v);
      return;
    }
    vm.ensureStack(L, 4);
    if (Array.isArray(v)) {
      vm.newTable(L, v.length, 0);
      for (let i = 0; i < v.length; i++) {
        this.pushValue(L, v[i], resp, depth + 1);
        vm.rawSetI(L, -2, i + 1);
      }
      return;
    }
    if (v instanceof Error) {
      vm.newTable(L, 0, 1);
      vm.pushString(L, normalizeError(v));
      vm.rawSetField(L, -2, "err");
      return;
    }
    if (typeof v === "object") {
      // A hash as the fake keeps it (HGETALL): a flat field/value array in RESP2.
      const entries = Object.entries(v as Record<string, unknown>);
      vm.newTable(L, entries.length * 2, 0);
      let i = 1;
      for (const [k, val] of entries) {
        vm.pushString(L, k);
        vm.rawSetI(L, -2, i++);
        this.pushValue(L, val, resp, depth + 1);
        vm.rawSetI(L, -2, i++);
      }
      return;
    }
    vm.pushBoolean(L, false);
  }

  // ---------------------------------------------------------------- the redis table

  private installRedis(): void {
    const vm = this.vm;
    const L = vm.L;
    vm.newTable(L, 0, 32);
    vm.pushFunction(L, (C) => this.luaCall(C, true));
    vm.rawSetField(L, -2, "call");
    vm.pushFunction(L, (C) => this.luaCall(C, false));
    vm.rawSetField(L, -2, "pcall");
    vm.pushFunction(L, (C) => {
      if (vm.top(C) !== 1) throw new LuaRaise("ERR wrong number of arguments", true);
      const ty = vm.type(C, 1);
      if (ty !== T.STRING && ty !== T.NUMBER) throw new LuaRaise("ERR wrong number of arguments", true);
      vm.pushString(C, createHash("sha1").update(vm.toBytes(C, 1)).digest("hex"));
      return 1;
    });
    vm.rawSetField(L, -2, "sha1hex");
    vm.pushFunction(L, (C) => {
      if (vm.top(C) !== 1 || vm.type(C, 1) !== T.STRING) {
        pushErrTable(vm, C, "ERR wrong number or type of arguments");
        return 1;
      }
      pushErrTable(vm, C, errorReplyMessage(vm.toText(C, 1)));
      return 1;
    });
    vm.rawSetField(L, -2, "error_reply");
    vm.pushFunction(L, (C) => {
      if (vm.top(C) !== 1 || vm.type(C, 1) !== T.STRING) {
        pushErrTable(vm, C, "ERR wrong number or type of arguments");
        return 1;
      }
      const bytes = vm.toBytes(C, 1);
      vm.newTable(C, 0, 1);
      vm.pushBytes(C, bytes);
      vm.rawSetField(C, -2, "ok");
      return 1;
    });
    vm.rawSetField(L, -2, "status_reply");
    vm.pushFunction(L, (C) => {
      const n = vm.top(C);
      if (n < 2) throw new LuaRaise("ERR redis.log() requires two arguments or more.", true);
      if (vm.type(C, 1) !== T.NUMBER) throw new LuaRaise("ERR First argument must be a number (log level).", true);
      const level = Number(vm.isInteger(C, 1) ? vm.toInteger(C, 1) : Math.trunc(vm.toNumber(C, 1)));
      if (level < LOG_LEVELS.LOG_DEBUG || level > LOG_LEVELS.LOG_WARNING) throw new LuaRaise("ERR Invalid debug level.", true);
      const parts: string[] = [];
      for (let i = 2; i <= n; i++) {
        const ty = vm.type(C, i);
        if (ty === T.STRING || ty === T.NUMBER) parts.push(vm.toText(C, i));
      }
      this.logSink?.(level, parts.join(" "));
      return 0;
    });
    vm.rawSetField(L, -2, "log");
    vm.pushFunction(L, (C) => {
      if (vm.top(C) !== 1) throw new LuaRaise("ERR redis.setresp() requires one argument.", true);
      const v = vm.type(C, 1) === T.NUMBER ? vm.toNumber(C, 1) : NaN;
      if (v !== 2 && v !== 3) throw new LuaRaise("ERR RESP version must be 2 or 3.", true);
      if (this.current) this.current.resp = v;
      return 0;
    });
    vm.rawSetField(L, -2, "setresp");
    vm.pushFunction(L, (C) => {
      if (vm.top(C) !== 1) throw new LuaRaise("ERR redis.set_repl() requires one argument.", true);
      const flags = vm.type(C, 1) === T.NUMBER ? vm.toNumber(C, 1) : NaN;
      if (!(flags >= 0 && flags <= 3 && Number.isInteger(flags))) throw new LuaRaise("ERR Invalid replication flags. Use REPL_AOF, REPL_REPLICA, REPL_ALL or REPL_NONE.", true);
      // There are no replicas and no AOF: every flag value is accepted and changes nothing.
      return 0;
    });
    vm.rawSetField(L, -2, "set_repl");
    vm.pushFunction(L, (C) => {
      // Redis 7 always replicates effects; the call only reports that.
      vm.pushBoolean(C, true);
      return 1;
    });
    vm.rawSetField(L, -2, "replicate_commands");
    vm.pushFunction(L, (C) => {
      // Without a debugging session (SCRIPT DEBUG), Redis returns false and does nothing.
      vm.pushBoolean(C, false);
      return 1;
    });
    vm.rawSetField(L, -2, "breakpoint");
    vm.pushFunction(L, () => 0); // Outside SCRIPT DEBUG, redis.debug() prints nowhere.
    vm.rawSetField(L, -2, "debug");
    vm.pushFunction(L, (C) => {
      if (vm.top(C) < 1) throw new LuaRaise("ERR Please specify at least one argument for this redis lib call", true);
      const name = vm.toText(C, 1).toLowerCase();
      const known = this.current?.host.knowsCommand(name) ?? false;
      if (!known) throw new LuaRaise("ERR Invalid command passed to redis.acl_check_cmd()", true);
      // The fake has one user with every permission.
      vm.pushBoolean(C, true);
      return 1;
    });
    vm.rawSetField(L, -2, "acl_check_cmd");
    const constants: [string, number][] = [
      ...Object.entries(LOG_LEVELS),
      ["REPL_NONE", 0],
      ["REPL_AOF", 1],
      ["REPL_SLAVE", 2],
      ["REPL_REPLICA", 2],
      ["REPL_ALL", 3],
      ["REDIS_VERSION_NUM", EMULATED_REDIS_VERSION_NUM],
    ];
    for (const [k, v] of constants) {
      vm.pushInteger(L, v);
      vm.rawSetField(L, -2, k);
    }
    vm.pushString(L, EMULATED_REDIS_VERSION);
    vm.rawSetField(L, -2, "REDIS_VERSION");
    vm.setGlobal(L, "redis");
  }

  private luaCall(L: number, raise: boolean): number {
    const vm = this.vm;
    const fail = (message: string): number => {
      if (raise) throw new LuaRaise(message, true);
      pushErrTable(vm, L, message);
      return 1;
    };
    const running = this.current;
    if (!running) return fail("ERR redis.call() used outside of a script");
    const n = vm.top(L);
    if (n === 0) return fail("ERR Please specify at least one argument for this redis lib call");
    const argv: CommandArg[] = new Array(n);
    for (let i = 1; i <= n; i++) {
      const ty = vm.type(L, i);
      if (ty === T.STRING) argv[i - 1] = vm.toTextOrBuffer(L, i);
      else if (ty === T.NUMBER) argv[i - 1] = formatLuaArgument(vm.isInteger(L, i) ? vm.toInteger(L, i) : vm.toNumber(L, i));
      else return fail("ERR Lua redis lib command arguments must be strings or integers");
    }
    const name = String(argv[0]).toLowerCase();
    const args = argv.slice(1);
    let result: unknown;
    try {
      result = running.host.callFromScript(name, args);
    } catch (err) {
      return fail(normalizeError(err));
    }
    vm.setTop(L, 0);
    this.pushCommandReply(L, result, name, args);
    return 1;
  }
}

function pushErrTable(vm: LuaVm, L: number, message: string): void {
  vm.newTable(L, 0, 1);
  vm.pushString(L, message);
  vm.rawSetField(L, -2, "err");
}

/** `redis.error_reply(s)` as Redis 7's luaPushErrorBuff builds it ("-CODE msg" or "ERR msg"). */
function errorReplyMessage(s: string): string {
  const raw = s.startsWith("-") ? s : `-${s}`;
  const space = raw.indexOf(" ");
  const code = space < 0 ? "ERR" : raw.slice(1, space);
  const msg = (space < 0 ? raw.slice(1) : raw.slice(space + 1)).replace(/^[\r\n]+|[\r\n]+$/g, "");
  return `${code} ${msg}`;
}

/** An error from a command as a Redis error reply: always "CODE message". */
export function normalizeError(err: unknown): string {
  const message = (err instanceof Error ? err.message : String(err)).replace(/[\r\n]+$/, "");
  return /^[A-Z][A-Z0-9_-]* /.test(message) ? message : `ERR ${message}`;
}

/**
 * A Lua state for the in-memory Redis, driven through the raw Lua 5.4 C API of wasmoon's
 * WebAssembly build (the wasm file ships inside the npm package).
 *
 * Contract: the small, binary-safe slice of the C API that the script runner and the codec
 * libraries need. Lua strings cross the boundary as bytes (`Uint8Array`), never through a
 * UTF-8 round trip, so msgpack-packed arguments and any other byte string survive exactly.
 * Integers are 64-bit (`lua_Integer`), so millisecond timestamps stay integers.
 *
 * Why wasmoon rather than fengari (the Lua that ioredis-mock bundles): fengari's integers are
 * 32-bit, so `tonumber("1700000000123")` is a float and `"repeat:" .. t` prints
 * `repeat:1700000000123.0`, which changes job-scheduler job ids; wasmoon's Lua keeps it an
 * integer. Redis itself runs Lua 5.1; the 5.1/5.4 differences are bridged in `prelude.ts`.
 *
 * The WebAssembly module is compiled once per process (top-level await below), so every
 * caller gets a synchronous API; scripts then run synchronously, which is what makes them
 * atomic with respect to the fake's other commands.
 *
 * Not covered yet:
 * - memory limits and script time limits (`lua-time-limit`, SCRIPT KILL);
 * - coroutines that yield across a JavaScript function (never needed by Redis scripts).
 */
import { LuaFactory } from "wasmoon";

/** The part of the Emscripten module (raw C exports) this file uses. */
interface LuaModule {
  HEAPU8: Uint8Array;
  HEAPU32: Uint32Array;
  _malloc(size: number): number;
  _free(ptr: number): void;
  addFunction(fn: (L: number) => number, signature: string): number;
  _luaL_newstate(): number;
  _luaL_openlibs(L: number): void;
  _luaL_loadbufferx(L: number, buf: number, size: number, name: number, mode: number): number;
  _luaL_ref(L: number, t: number): number;
  _luaL_unref(L: number, t: number, ref: number): void;
  _lua_close(L: number): void;
  _lua_gettop(L: number): number;
  _lua_settop(L: number, idx: number): void;
  _lua_absindex(L: number, idx: number): number;
  _lua_checkstack(L: number, n: number): number;
  _lua_pushvalue(L: number, idx: number): void;
  _lua_copy(L: number, from: number, to: number): void;
  _lua_rotate(L: number, idx: number, n: number): void;
  _lua_type(L: number, idx: number): number;
  _lua_isinteger(L: number, idx: number): number;
  _lua_tointegerx(L: number, idx: number, isnum: number): bigint;
  _lua_tonumberx(L: number, idx: number, isnum: number): number;
  _lua_toboolean(L: number, idx: number): number;
  _lua_tolstring(L: number, idx: number, len: number): number;
  _lua_touserdata(L: number, idx: number): number;
  _lua_rawlen(L: number, idx: number): bigint;
  _lua_pushnil(L: number): void;
  _lua_pushnumber(L: number, n: number): void;
  _lua_pushinteger(L: number, n: bigint): void;
  _lua_pushlstring(L: number, s: number, len: number): number;
  _lua_pushboolean(L: number, b: number): void;
  _lua_pushlightuserdata(L: number, p: number): void;
  _lua_pushcclosure(L: number, fn: number, n: number): void;
  _lua_createtable(L: number, narr: number, nrec: number): void;
  _lua_rawget(L: number, idx: number): number;
  _lua_rawgeti(L: number, idx: number, n: bigint): number;
  _lua_rawset(L: number, idx: number): void;
  _lua_rawseti(L: number, idx: number, n: bigint): void;
  _lua_getfield(L: number, idx: number, k: number): number;
  _lua_setfield(L: number, idx: number, k: number): void;
  _lua_next(L: number, idx: number): number;
  _lua_error(L: number): number;
  _luaL_where(L: number, level: number): void;
  _lua_pcallk(L: number, nargs: number, nresults: number, msgh: number, ctx: number, k: number): number;
}

const wasm = await new LuaFactory().getLuaModule();
const M = wasm.module as unknown as LuaModule;

/** Lua type tags (lua.h). */
export const T = {
  NONE: -1,
  NIL: 0,
  BOOLEAN: 1,
  LIGHTUSERDATA: 2,
  NUMBER: 3,
  STRING: 4,
  TABLE: 5,
  FUNCTION: 6,
  USERDATA: 7,
  THREAD: 8,
} as const;

/** `LUA_REGISTRYINDEX` for LUAI_MAXSTACK = 1000000 (luaconf.h). */
export const REGISTRY = -1001000;
/** `LUA_RIDX_GLOBALS` (lua.h): the globals table's slot in the registry. */
const RIDX_GLOBALS = 2n;

const utf8 = new TextEncoder();
const utf8Lenient = new TextDecoder("utf-8");
const utf8Strict = new TextDecoder("utf-8", { fatal: true });

/**
 * Emscripten implements Lua's longjmp as a thrown `Infinity`: it must pass through any
 * JavaScript frame untouched, or the Lua state is left corrupted.
 */
export function isLuaUnwind(err: unknown): boolean {
  return err === Infinity;
}

/** A JavaScript error that becomes a Lua error with this exact value (a message or bytes). */
export class LuaRaise extends Error {
  constructor(readonly value: string | Uint8Array, readonly asErrTable = false) {
    super(typeof value === "string" ? value : utf8Lenient.decode(value));
  }
}

export type LuaCFunction = (L: number) => number;

/** One Lua state plus the helpers to move values across the boundary. */
export class LuaVm {
  readonly L: number;
  private readonly lenPtr: number;
  private scratchPtr = 0;
  private scratchCap = 0;
  private readonly cstrings = new Map<string, number>();
  private closed = false;

  constructor() {
    this.L = M._luaL_newstate();
    if (!this.L) throw new Error("Lua state could not be created (out of memory)");
    M._luaL_openlibs(this.L);
    this.lenPtr = M._malloc(8);
  }

  close(): void {
    if (this.closed) return;
    this.closed = true;
    M._lua_close(this.L);
    M._free(this.lenPtr);
    if (this.scratchPtr) M._free(this.scratchPtr);
    for (const p of this.cstrings.values()) M._free(p);
  }

  // ---- stack ----
  top(L = this.L): number {
    return M._lua_gettop(L);
  }
  setTop(L: number, idx: number): void {
    M._lua_settop(L, idx);
  }
  pop(L: number, n = 1): void {
    M._lua_settop(L, -n - 1);
  }
  abs(L: number, idx: number): number {
    return M._lua_absindex(L, idx);
  }
  ensureStack(L: number, n: number): void {
    if (!M._lua_checkstack(L, n)) throw new LuaRaise("stack overflow (too many values)");
  }
  pushValue(L: number, idx: number): void {
    M._lua_pushvalue(L, idx);
  }
  rotate(L: number, idx: number, n: number): void {
    M._lua_rotate(L, idx, n);
  }
  copy(L: number, from: number, to: number): void {
    M._lua_copy(L, from, to);
  }
  type(L: number, idx: number): number {
    return M._lua_type(L, idx);
  }

  // ---- scalars ----
  pushNil(L: number): void {
    M._lua_pushnil(L);
  }
  pushBoolean(L: number, b: boolean): void {
    M._lua_pushboolean(L, b ? 1 : 0);
  }
  /** Pushes a Lua integer; `n` must be an integer within the int64 range. */
  pushInteger(L: number, n: number | bigint): void {
    M._lua_pushinteger(L, typeof n === "bigint" ? n : BigInt(n));
  }
  pushFloat(L: number, n: number): void {
    M._lua_pushnumber(L, n);
  }
  /**
   * Pushes a number the way Lua 5.1 (Redis) would see it: integral values within ±2^63 as
   * integers (so they print without ".0"), everything else as a float.
   */
  pushNumber(L: number, n: number): void {
    if (Number.isInteger(n) && Math.abs(n) < 9.2e18) M._lua_pushinteger(L, BigInt(n));
    else M._lua_pushnumber(L, n);
  }
  isInteger(L: number, idx: number): boolean {
    return M._lua_isinteger(L, idx) !== 0;
  }
  toInteger(L: number, idx: number): bigint {
    return M._lua_tointegerx(L, idx, 0);
  }
  toNumber(L: number, idx: number): number {
    return M._lua_tonumberx(L, idx, 0);
  }
  toBoolean(L: number, idx: number): boolean {
    return M._lua_toboolean(L, idx) !== 0;
  }
  pushLightUserdata(L: number, p: number): void {
    M._lua_pushlightuserdata(L, p);
  }
  toUserdata(L: number, idx: number): number {
    return M._lua_touserdata(L, idx);
  }

  // ---- strings (binary-safe) ----
  private scratch(size: number): number {
    if (size > this.scratchCap) {
      if (this.scratchPtr) M._free(this.scratchPtr);
      this.scratchCap = Math.max(size, this.scratchCap * 2, 4096);
      this.scratchPtr = M._malloc(this.scratchCap);
      if (!this.scratchPtr) {
        this.scratchCap = 0;
        throw new Error("out of memory in the Lua heap");
      }
    }
    return this.scratchPtr;
  }
  pushBytes(L: number, bytes: Uint8Array): void {
    const p = this.scratch(bytes.length + 1);
    M.HEAPU8.set(bytes, p);
    M._lua_pushlstring(L, p, bytes.length);
  }
  /** Pushes a JavaScript string as its UTF-8 bytes. */
  pushString(L: number, s: string): void {
    if (s.length < 64 && /^[\x00-\x7f]*$/.test(s)) {
      const p = this.scratch(s.length + 1);
      const heap = M.HEAPU8;
      for (let i = 0; i < s.length; i++) heap[p + i] = s.charCodeAt(i);
      M._lua_pushlstring(L, p, s.length);
      return;
    }
    const max = s.length * 3 + 1;
    const p = this.scratch(max);
    const { written } = utf8.encodeInto(s, M.HEAPU8.subarray(p, p + max));
    M._lua_pushlstring(L, p, written);
  }
  /** The bytes of the string (or number, converted in place) at `idx`; a copy. */
  toBytes(L: number, idx: number): Uint8Array {
    const p = M._lua_tolstring(L, idx, this.lenPtr);
    if (!p) return new Uint8Array(0);
    const len = M.HEAPU32[this.lenPtr >> 2];
    return M.HEAPU8.slice(p, p + len);
  }
  /** A view of the string's bytes, valid only until the next call into Lua. */
  viewBytes(L: number, idx: number): Uint8Array {
    const p = M._lua_tolstring(L, idx, this.lenPtr);
    if (!p) return new Uint8Array(0);
    const len = M.HEAPU32[this.lenPtr >> 2];
    return M.HEAPU8.subarray(p, p + len);
  }
  /** The string at `idx` decoded as UTF-8 (invalid bytes become U+FFFD). */
  toText(L: number, idx: number): string {
    return utf8Lenient.decode(this.viewBytes(L, idx));
  }
  /** The string at `idx` as text when it is valid UTF-8, otherwise as a Buffer of its bytes. */
  toTextOrBuffer(L: number, idx: number): string | Buffer {
    const view = this.viewBytes(L, idx);
    let ascii = true;
    for (let i = 0; i < view.length; i++) {
      if (view[i] >= 0x80) {
        ascii = false;
        break;
      }
    }
    if (ascii) return utf8Lenient.decode(view);
    try {
      return utf8Strict.decode(view);
    } catch {
      return Buffer.from(view);
    }
  }

  /** A NUL-terminated copy of `s` in the Lua heap, kept for the life of the VM. */
  cstr(s: string): number {
    let p = this.cstrings.get(s);
    if (p === undefined) {
      const bytes = utf8.encode(s);
      p = M._malloc(bytes.length + 1);
      M.HEAPU8.set(bytes, p);
      M.HEAPU8[p + bytes.length] = 0;
      this.cstrings.set(s, p);
    }
    return p;
  }

  // ---- tables ----
  newTable(L: number, narr = 0, nrec = 0): void {
    M._lua_createtable(L, narr, nrec);
  }
  /** t[i] = top of stack (popped); `t` given by absolute index or relative to before the value. */
  rawSetI(L: number, tableIdx: number, i: number): void {
    M._lua_rawseti(L, tableIdx, BigInt(i));
  }
  /** t[key] = value with key and value on top of the stack (both popped), raw. */
  rawSet(L: number, tableIdx: number): void {
    M._lua_rawset(L, tableIdx);
  }
  rawGetI(L: number, tableIdx: number, i: number): number {
    return M._lua_rawgeti(L, tableIdx, BigInt(i));
  }
  /** t[key] = top of stack (popped), raw. */
  rawSetField(L: number, tableIdx: number, key: string): void {
    const t = this.abs(L, tableIdx);
    this.pushString(L, key);
    M._lua_pushvalue(L, -2);
    M._lua_rawset(L, t);
    M._lua_settop(L, -2);
  }
  /** Pushes t[key] (raw) and returns its type. */
  rawGetField(L: number, tableIdx: number, key: string): number {
    const t = this.abs(L, tableIdx);
    this.pushString(L, key);
    return M._lua_rawget(L, t);
  }
  /** Pops a key and pushes the next key/value pair; false when the traversal is over. */
  next(L: number, tableIdx: number): boolean {
    return M._lua_next(L, tableIdx) !== 0;
  }
  rawLen(L: number, idx: number): number {
    return Number(M._lua_rawlen(L, idx));
  }
  pushGlobals(L: number): void {
    M._lua_rawgeti(L, REGISTRY, RIDX_GLOBALS);
  }
  /** Pushes the global `name`, bypassing metatables. */
  getGlobal(L: number, name: string): number {
    this.pushGlobals(L);
    const ty = this.rawGetField(L, -1, name);
    M._lua_copy(L, -1, -2);
    M._lua_settop(L, -2);
    return ty;
  }
  /** Sets the global `name` to the value on top of the stack (popped), bypassing metatables. */
  setGlobal(L: number, name: string): void {
    this.pushGlobals(L);
    M._lua_pushvalue(L, -2);
    this.rawSetField(L, -2, name);
    M._lua_settop(L, -3);
  }

  // ---- functions ----
  /**
   * Pushes a JavaScript function as a Lua C function. A `LuaRaise` (or any other error)
   * thrown by `fn` becomes a Lua error; Lua's own unwinding passes through untouched.
   */
  pushFunction(L: number, fn: LuaCFunction): void {
    const ptr = M.addFunction((calledL: number) => {
      let raise: LuaRaise;
      try {
        return fn(calledL);
      } catch (err) {
        if (isLuaUnwind(err)) throw err;
        raise = err instanceof LuaRaise ? err : new LuaRaise(err instanceof Error ? err.message : String(err));
      }
      if (raise.asErrTable) {
        this.newTable(calledL, 0, 1);
        this.pushErrValue(calledL, raise.value);
        this.rawSetField(calledL, -2, "err");
      } else {
        // Like luaL_error: prefix the caller's position ("user_script:12: ").
        M._luaL_where(calledL, 1);
        const where = this.toBytes(calledL, -1);
        M._lua_settop(calledL, -2);
        const body = typeof raise.value === "string" ? utf8.encode(raise.value) : raise.value;
        const message = new Uint8Array(where.length + body.length);
        message.set(where, 0);
        message.set(body, where.length);
        this.pushBytes(calledL, message);
      }
      return M._lua_error(calledL);
    }, "ii");
    M._lua_pushcclosure(L, ptr, 0);
  }
  private pushErrValue(L: number, v: string | Uint8Array): void {
    if (typeof v === "string") this.pushString(L, v);
    else this.pushBytes(L, v);
  }

  /** Compiles `code`; pushes the chunk as a function, or throws its syntax error. */
  load(L: number, code: Uint8Array, chunkName: string): void {
    const p = M._malloc(code.length + 1);
    try {
      M.HEAPU8.set(code, p);
      const status = M._luaL_loadbufferx(L, p, code.length, this.cstr(chunkName), this.cstr("t"));
      if (status !== 0) {
        const message = this.toText(L, -1);
        M._lua_settop(L, -2);
        throw new Error(message);
      }
    } finally {
      M._free(p);
    }
  }
  /** `lua_pcall`; returns the status (0 = ok). */
  pcall(L: number, nargs: number, nresults: number, msgh: number): number {
    return M._lua_pcallk(L, nargs, nresults, msgh, 0, 0);
  }
  ref(L: number): number {
    return M._luaL_ref(L, REGISTRY);
  }
  unref(L: number, ref: number): void {
    M._luaL_unref(L, REGISTRY, ref);
  }
  pushRef(L: number, ref: number): void {
    M._lua_rawgeti(L, REGISTRY, BigInt(ref));
  }

  /** Runs a chunk of trusted setup code; throws its error message. */
  run(code: string, chunkName = "=prelude"): void {
    const L = this.L;
    const base = this.top(L);
    this.load(L, utf8.encode(code), chunkName);
    const status = this.pcall(L, 0, 0, 0);
    if (status !== 0) {
      const message = this.toText(L, -1);
      this.setTop(L, base);
      throw new Error(message);
    }
  }
}

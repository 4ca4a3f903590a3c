/**
 * `cmsgpack` for scripts on the in-memory Redis: MessagePack between Lua values and byte
 * strings, as Redis's bundled lua_cmsgpack (0.4.0) does it.
 *
 * Contract (checked against redis-server 7.0.15 and the msgpackr npm package in
 * tests/unit/redis-fake/codecs.test.ts):
 * - `pack(...)` concatenates one object per argument. Numbers that are integral and fit in
 *   int64 use the smallest integer format (fixint, uint8..64, int8..64); other numbers are
 *   float32 when that is exact, else float64. Strings are str (fixstr/str8/16/32) with their
 *   bytes untouched. A table whose keys are exactly 1..n is an array (the empty table is an
 *   empty array), any other table a map. Tables nested deeper than 16 levels, functions and
 *   userdata encode as nil.
 * - `unpack(s)` returns every object in `s`; str and bin become Lua strings byte for byte,
 *   integral numbers become Lua integers (so they print like Lua 5.1's doubles, without
 *   ".0"), arrays and maps become tables. Truncated input raises "Missing bytes in input.",
 *   unknown types (ext, 0xc1) raise "Bad data format in input.".
 * - `unpack_one(s [, offset])` and `unpack_limit(s, limit [, offset])` return the next offset
 *   (-1 once the input is used up) followed by the decoded objects.
 *
 * Not covered yet:
 * - uint64 values above 2^63-1 decode as floats; below that they stay exact 64-bit
 *   integers, where Lua 5.1 would round them to a double.
 */
import { ByteWriter } from "./byte-writer";
import { LuaRaise, T, type LuaVm } from "./lua-vm";

const MAX_NESTING = 16;
const INT64_MIN = -(2n ** 63n);
const INT64_LIMIT = 2 ** 63;

export function installCmsgpack(vm: LuaVm): void {
  const L = vm.L;
  vm.newTable(L, 0, 8);
  vm.pushFunction(L, (C) => pack(vm, C));
  vm.rawSetField(L, -2, "pack");
  vm.pushFunction(L, (C) => unpackFull(vm, C, "unpack", 0, 0));
  vm.rawSetField(L, -2, "unpack");
  vm.pushFunction(L, (C) => {
    const offset = optInteger(vm, C, 2, 0, "unpack_one");
    return unpackFull(vm, C, "unpack_one", 1, offset);
  });
  vm.rawSetField(L, -2, "unpack_one");
  vm.pushFunction(L, (C) => {
    const limit = optInteger(vm, C, 2, 0, "unpack_limit");
    const offset = optInteger(vm, C, 3, 0, "unpack_limit");
    return unpackFull(vm, C, "unpack_limit", limit, offset);
  });
  vm.rawSetField(L, -2, "unpack_limit");
  vm.pushString(L, "lua-cmsgpack");
  vm.rawSetField(L, -2, "_NAME");
  vm.pushString(L, "lua-cmsgpack 0.4.0");
  vm.rawSetField(L, -2, "_VERSION");
  vm.pushString(L, "MessagePack C implementation for Lua");
  vm.rawSetField(L, -2, "_DESCRIPTION");
  vm.pushString(L, "Copyright (C) 2012, Salvatore Sanfilippo");
  vm.rawSetField(L, -2, "_COPYRIGHT");
  vm.setGlobal(L, "cmsgpack");
}

function optInteger(vm: LuaVm, L: number, idx: number, dflt: number, fname: string): number {
  const ty = vm.type(L, idx);
  if (ty === T.NONE || ty === T.NIL) return dflt;
  if (ty !== T.NUMBER) throw new LuaRaise(`bad argument #${idx} to '${fname}' (number expected, got ${typeName(ty)})`);
  return Number(vm.isInteger(L, idx) ? vm.toInteger(L, idx) : Math.trunc(vm.toNumber(L, idx)));
}

export function typeName(ty: number): string {
  return ["nil", "boolean", "userdata", "number", "string", "table", "function", "userdata", "thread"][ty] ?? "no value";
}

// ---------------------------------------------------------------- pack

function pack(vm: LuaVm, L: number): number {
  const n = vm.top(L);
  if (n === 0) throw new LuaRaise("MessagePack pack needs input.");
  const w = new ByteWriter();
  for (let i = 1; i <= n; i++) encodeValue(vm, L, i, w, 0);
  vm.pushBytes(L, w.bytes());
  return 1;
}

function encodeValue(vm: LuaVm, L: number, idx: number, w: ByteWriter, level: number): void {
  let ty = vm.type(L, idx);
  if (ty === T.TABLE && level === MAX_NESTING) ty = T.NIL;
  switch (ty) {
    case T.BOOLEAN:
      w.byte(vm.toBoolean(L, idx) ? 0xc3 : 0xc2);
      return;
    case T.NUMBER:
      if (vm.isInteger(L, idx)) encodeInteger(w, vm.toInteger(L, idx));
      else encodeNumber(w, vm.toNumber(L, idx));
      return;
    case T.STRING:
      encodeBytes(w, vm.viewBytes(L, idx));
      return;
    case T.TABLE:
      encodeTable(vm, L, vm.abs(L, idx), w, level);
      return;
    default:
      w.byte(0xc0);
  }
}

export function encodeNumber(w: ByteWriter, d: number): void {
  // lua_cmsgpack: IS_INT64_EQUIVALENT(d) ? integer : (float)d == d ? float32 : float64.
  if (Number.isInteger(d) && d >= -INT64_LIMIT && d < INT64_LIMIT) {
    encodeInteger(w, BigInt(d));
  } else if (Math.fround(d) === d) {
    w.byte(0xca);
    w.f32(d);
  } else {
    w.byte(0xcb);
    w.f64(d);
  }
}

export function encodeInteger(w: ByteWriter, i: bigint): void {
  if (i >= 0n) {
    if (i <= 127n) w.byte(Number(i));
    else if (i <= 0xffn) w.bytes2(0xcc, Number(i));
    else if (i <= 0xffffn) {
      w.byte(0xcd);
      w.u16(Number(i));
    } else if (i <= 0xffffffffn) {
      w.byte(0xce);
      w.u32(Number(i));
    } else {
      w.byte(0xcf);
      w.u64(i);
    }
  } else if (i >= -32n) {
    w.byte(Number(i) & 0xff);
  } else if (i >= -128n) {
    w.bytes2(0xd0, Number(i) & 0xff);
  } else if (i >= -32768n) {
    w.byte(0xd1);
    w.u16(Number(i) & 0xffff);
  } else if (i >= -2147483648n) {
    w.byte(0xd2);
    w.u32(Number(i) >>> 0);
  } else {
    w.byte(0xd3);
    w.i64(i < INT64_MIN ? INT64_MIN : i);
  }
}

export function encodeBytes(w: ByteWriter, bytes: Uint8Array): void {
  const len = bytes.length;
  if (len < 32) w.byte(0xa0 | len);
  else if (len <= 0xff) w.bytes2(0xd9, len);
  else if (len <= 0xffff) {
    w.byte(0xda);
    w.u16(len);
  } else {
    w.byte(0xdb);
    w.u32(len);
  }
  w.append(bytes);
}

function encodeTable(vm: LuaVm, L: number, t: number, w: ByteWriter, level: number): void {
  vm.ensureStack(L, 4);
  // table_is_an_array: every key a positive integral number, and max key == number of keys.
  let count = 0;
  let max = 0;
  let isArray = true;
  vm.pushNil(L);
  while (vm.next(L, t)) {
    vm.pop(L, 1);
    if (vm.type(L, -1) !== T.NUMBER) {
      isArray = false;
      vm.pop(L, 1);
      break;
    }
    const k = vm.isInteger(L, -1) ? Number(vm.toInteger(L, -1)) : vm.toNumber(L, -1);
    if (!(k > 0) || !Number.isInteger(k) || k > 2147483647) {
      isArray = false;
      vm.pop(L, 1);
      break;
    }
    if (k > max) max = k;
    count++;
  }
  if (isArray && max === count) {
    if (count <= 15) w.byte(0x90 | count);
    else if (count <= 0xffff) {
      w.byte(0xdc);
      w.u16(count);
    } else {
      w.byte(0xdd);
      w.u32(count);
    }
    for (let j = 1; j <= count; j++) {
      vm.rawGetI(L, t, j);
      encodeValue(vm, L, -1, w, level + 1);
      vm.pop(L, 1);
    }
    return;
  }
  let pairs = 0;
  vm.pushNil(L);
  while (vm.next(L, t)) {
    vm.pop(L, 1);
    pairs++;
  }
  if (pairs <= 15) w.byte(0x80 | pairs);
  else if (pairs <= 0xffff) {
    w.byte(0xde);
    w.u16(pairs);
  } else {
    w.byte(0xdf);
    w.u32(pairs);
  }
  vm.pushNil(L);
  while (vm.next(L, t)) {
    encodeValue(vm, L, -2, w, level + 1);
    encodeValue(vm, L, -1, w, level + 1);
    vm.pop(L, 1);
  }
}

// ---------------------------------------------------------------- unpack

class DecodeError extends Error {}
const EOF = "Missing bytes in input.";
const BADFMT = "Bad data format in input.";

/** lua_cmsgpack's mp_unpack_full: with limit 0 and offset 0 it decodes everything and returns no offset. */
function unpackFull(vm: LuaVm, L: number, fname: string, limit: number, offset: number): number {
  const all = limit === 0 && offset === 0;
  if (vm.type(L, 1) !== T.STRING) {
    throw new LuaRaise(`bad argument #1 to '${fname}' (string expected, got ${typeName(vm.type(L, 1))})`);
  }
  const bytes = vm.toBytes(L, 1);
  if (offset < 0 || limit < 0) {
    throw new LuaRaise(`Invalid request to unpack with offset of ${offset} and limit of ${limit}.`);
  }
  if (offset > bytes.length) {
    throw new LuaRaise(`Start offset ${offset} greater than input length ${bytes.length}.`);
  }
  const max = all ? Infinity : limit;
  vm.setTop(L, 0);
  let pos = offset;
  let count = 0;
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  try {
    while (pos < bytes.length && count < max) {
      vm.ensureStack(L, 8);
      pos = decodeValue(vm, L, bytes, view, pos);
      count++;
    }
  } catch (err) {
    if (err instanceof DecodeError) throw new LuaRaise(err.message);
    throw err;
  }
  if (all) return count;
  // The next offset goes first, before the decoded objects.
  vm.ensureStack(L, 1);
  vm.pushInteger(L, pos >= bytes.length ? -1 : pos);
  vm.rotate(L, -(count + 1), 1);
  return count + 1;
}

function need(bytes: Uint8Array, pos: number, n: number): void {
  if (pos + n > bytes.length) throw new DecodeError(EOF);
}

function decodeValue(vm: LuaVm, L: number, b: Uint8Array, v: DataView, pos: number): number {
  need(b, pos, 1);
  const t = b[pos++];
  if (t <= 0x7f) {
    vm.pushInteger(L, t);
    return pos;
  }
  if (t >= 0xe0) {
    vm.pushInteger(L, t - 0x100);
    return pos;
  }
  if ((t & 0xe0) === 0xa0) return pushStr(vm, L, b, pos, t & 0x1f);
  if ((t & 0xf0) === 0x90) return decodeArray(vm, L, b, v, pos, t & 0x0f);
  if ((t & 0xf0) === 0x80) return decodeMap(vm, L, b, v, pos, t & 0x0f);
  switch (t) {
    case 0xc0:
      vm.pushNil(L);
      return pos;
    case 0xc2:
      vm.pushBoolean(L, false);
      return pos;
    case 0xc3:
      vm.pushBoolean(L, true);
      return pos;
    case 0xcc:
      need(b, pos, 1);
      vm.pushInteger(L, b[pos]);
      return pos + 1;
    case 0xcd:
      need(b, pos, 2);
      vm.pushInteger(L, v.getUint16(pos));
      return pos + 2;
    case 0xce:
      need(b, pos, 4);
      vm.pushInteger(L, v.getUint32(pos));
      return pos + 4;
    case 0xcf: {
      need(b, pos, 8);
      const u = v.getBigUint64(pos);
      if (u < 2n ** 63n) vm.pushInteger(L, u);
      else vm.pushFloat(L, Number(u));
      return pos + 8;
    }
    case 0xd0:
      need(b, pos, 1);
      vm.pushInteger(L, v.getInt8(pos));
      return pos + 1;
    case 0xd1:
      need(b, pos, 2);
      vm.pushInteger(L, v.getInt16(pos));
      return pos + 2;
    case 0xd2:
      need(b, pos, 4);
      vm.pushInteger(L, v.getInt32(pos));
      return pos + 4;
    case 0xd3:
      need(b, pos, 8);
      vm.pushInteger(L, v.getBigInt64(pos));
      return pos + 8;
    case 0xca:
      need(b, pos, 4);
      vm.pushNumber(L, v.getFloat32(pos));
      return pos + 4;
    case 0xcb:
      need(b, pos, 8);
      vm.pushNumber(L, v.getFloat64(pos));
      return pos + 8;
    case 0xd9:
    case 0xc4:
      need(b, pos, 1);
      return pushStr(vm, L, b, pos + 1, b[pos]);
    case 0xda:
    case 0xc5:
      need(b, pos, 2);
      return pushStr(vm, L, b, pos + 2, v.getUint16(pos));
    case 0xdb:
    case 0xc6:
      need(b, pos, 4);
      return pushStr(vm, L, b, pos + 4, v.getUint32(pos));
    case 0xdc:
      need(b, pos, 2);
      return decodeArray(vm, L, b, v, pos + 2, v.getUint16(pos));
    case 0xdd:
      need(b, pos, 4);
      return decodeArray(vm, L, b, v, pos + 4, v.getUint32(pos));
    case 0xde:
      need(b, pos, 2);
      return decodeMap(vm, L, b, v, pos + 2, v.getUint16(pos));
    case 0xdf:
      need(b, pos, 4);
      return decodeMap(vm, L, b, v, pos + 4, v.getUint32(pos));
    default:
      throw new DecodeError(BADFMT);
  }
}

function pushStr(vm: LuaVm, L: number, b: Uint8Array, pos: number, len: number): number {
  need(b, pos, len);
  vm.pushBytes(L, b.subarray(pos, pos + len));
  return pos + len;
}

function decodeArray(vm: LuaVm, L: number, b: Uint8Array, v: DataView, pos: number, n: number): number {
  vm.ensureStack(L, 4);
  vm.newTable(L, Math.min(n, 1 << 16), 0);
  const t = vm.top(L);
  for (let i = 1; i <= n; i++) {
    pos = decodeValue(vm, L, b, v, pos);
    vm.rawSetI(L, t, i);
  }
  return pos;
}

function decodeMap(vm: LuaVm, L: number, b: Uint8Array, v: DataView, pos: number, n: number): number {
  vm.ensureStack(L, 4);
  vm.newTable(L, 0, Math.min(n, 1 << 16));
  const t = vm.top(L);
  for (let i = 0; i < n; i++) {
    pos = decodeValue(vm, L, b, v, pos);
    pos = decodeValue(vm, L, b, v, pos);
    vm.rawSet(L, t);
  }
  return pos;
}

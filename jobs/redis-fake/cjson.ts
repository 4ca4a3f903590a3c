/**
 * `cjson` for scripts on the in-memory Redis: JSON between Lua values and byte strings, as
 * Redis's bundled lua-cjson does it with its default settings.
 *
 * Contract (checked against redis-server 7.0.15 in tests/unit/redis-fake/codecs.test.ts):
 * - `encode(v)`: numbers as C's "%.14g" (so 12345678901234567 becomes 1.2345678901235e+16),
 *   NaN/Inf rejected; strings escaped like lua-cjson (`"`, `\`, `/` as `\/`, control bytes
 *   and 0x7f as `\u00XX` except \b \t \n \f \r), other bytes copied untouched; a table whose
 *   keys are all integers >= 1 is an array (holes become null) unless it is excessively
 *   sparse (max key > 2 * count and > 10: an error); any other table, including the empty
 *   table, is an object with number keys written as strings; `cjson.null` and nil are null;
 *   nesting deeper than 1000 is an error.
 * - `decode(s)`: standard JSON to Lua values; `\u` escapes (with surrogate pairs) become
 *   UTF-8; numbers become Lua numbers (integral ones as integers, which print like Lua 5.1's
 *   doubles); null becomes `cjson.null`; nesting deeper than 1000 is an error; errors read
 *   "Expected <what> but found <token> at character <n>".
 * - `encode_max_depth`, `decode_max_depth`, `encode_number_precision`, `encode_sparse_array`
 *   change the settings above.
 *
 * Not covered yet:
 * - `encode_invalid_numbers`, `decode_invalid_numbers`, `encode_keep_buffer`, `cjson.new`;
 *   decoding of the non-standard numbers lua-cjson accepts (hex, "nan", "inf").
 * - Object key order follows Lua 5.4's table traversal, which differs from Redis's Lua 5.1
 *   (JSON readers do not depend on it).
 */
import { ByteWriter } from "./byte-writer";
import { typeName } from "./cmsgpack";
import { LuaRaise, T, type LuaVm } from "./lua-vm";
import { formatG } from "./number-format";

interface CjsonConfig {
  encodeMaxDepth: number;
  decodeMaxDepth: number;
  precision: number;
  sparseConvert: boolean;
  sparseRatio: number;
  sparseSafe: number;
}

export function installCjson(vm: LuaVm): void {
  const L = vm.L;
  const cfg: CjsonConfig = {
    encodeMaxDepth: 1000,
    decodeMaxDepth: 1000,
    precision: 14,
    sparseConvert: false,
    sparseRatio: 2,
    sparseSafe: 10,
  };
  vm.newTable(L, 0, 12);
  vm.pushFunction(L, (C) => {
    if (vm.top(C) !== 1) throw new LuaRaise("bad argument #1 to 'encode' (expected 1 argument)");
    const w = new ByteWriter();
    encodeValue(vm, C, 1, w, cfg, 0);
    vm.pushBytes(C, w.bytes());
    return 1;
  });
  vm.rawSetField(L, -2, "encode");
  vm.pushFunction(L, (C) => {
    if (vm.top(C) !== 1) throw new LuaRaise("bad argument #1 to 'decode' (expected 1 argument)");
    if (vm.type(C, 1) !== T.STRING) {
      throw new LuaRaise(`bad argument #1 to 'decode' (string expected, got ${typeName(vm.type(C, 1))})`);
    }
    const bytes = vm.toBytes(C, 1);
    vm.setTop(C, 0);
    new JsonDecoder(vm, C, bytes, cfg).decodeDocument();
    return 1;
  });
  vm.rawSetField(L, -2, "decode");
  const intSetting = (name: string, get: () => number, set: (n: number) => void, lo: number, hi: number) => {
    vm.pushFunction(L, (C) => {
      if (vm.top(C) >= 1 && vm.type(C, 1) !== T.NIL) {
        const n = Math.trunc(vm.toNumber(C, 1));
        if (!(n >= lo && n <= hi)) throw new LuaRaise(`bad argument #1 to '${name}' (expected integer between ${lo} and ${hi})`);
        set(n);
      }
      vm.pushInteger(C, get());
      return 1;
    });
    vm.rawSetField(L, -2, name);
  };
  intSetting("encode_max_depth", () => cfg.encodeMaxDepth, (n) => (cfg.encodeMaxDepth = n), 1, 2147483647);
  intSetting("decode_max_depth", () => cfg.decodeMaxDepth, (n) => (cfg.decodeMaxDepth = n), 1, 2147483647);
  intSetting("encode_number_precision", () => cfg.precision, (n) => (cfg.precision = n), 1, 14);
  vm.pushFunction(L, (C) => {
    if (vm.top(C) >= 1 && vm.type(C, 1) !== T.NIL) {
      cfg.sparseConvert = vm.type(C, 1) === T.BOOLEAN ? vm.toBoolean(C, 1) : vm.toNumber(C, 1) !== 0;
    }
    if (vm.top(C) >= 2 && vm.type(C, 2) !== T.NIL) cfg.sparseRatio = Math.trunc(vm.toNumber(C, 2));
    if (vm.top(C) >= 3 && vm.type(C, 3) !== T.NIL) cfg.sparseSafe = Math.trunc(vm.toNumber(C, 3));
    vm.pushBoolean(C, cfg.sparseConvert);
    vm.pushInteger(C, cfg.sparseRatio);
    vm.pushInteger(C, cfg.sparseSafe);
    return 3;
  });
  vm.rawSetField(L, -2, "encode_sparse_array");
  vm.pushLightUserdata(L, 0);
  vm.rawSetField(L, -2, "null");
  vm.pushString(L, "cjson");
  vm.rawSetField(L, -2, "_NAME");
  vm.pushString(L, "2.1.0");
  vm.rawSetField(L, -2, "_VERSION");
  vm.setGlobal(L, "cjson");
}

// ---------------------------------------------------------------- encode

const ESCAPES: (string | null)[] = (() => {
  const table: (string | null)[] = new Array(256).fill(null);
  for (let c = 0; c < 0x20; c++) table[c] = `\\u${c.toString(16).padStart(4, "0")}`;
  table[0x08] = "\\b";
  table[0x09] = "\\t";
  table[0x0a] = "\\n";
  table[0x0c] = "\\f";
  table[0x0d] = "\\r";
  table[0x22] = '\\"';
  table[0x5c] = "\\\\";
  table[0x2f] = "\\/";
  table[0x7f] = "\\u007f";
  return table;
})();

function encodeString(w: ByteWriter, bytes: Uint8Array): void {
  w.byte(0x22);
  let start = 0;
  for (let i = 0; i < bytes.length; i++) {
    const esc = ESCAPES[bytes[i]];
    if (esc === null) continue;
    if (i > start) w.append(bytes.subarray(start, i));
    w.ascii(esc);
    start = i + 1;
  }
  if (start < bytes.length) w.append(bytes.subarray(start));
  w.byte(0x22);
}

function encodeNumber(w: ByteWriter, n: number, cfg: CjsonConfig): void {
  if (!Number.isFinite(n)) throw new LuaRaise("Cannot serialise number: must not be NaN or Inf");
  w.ascii(formatG(n, cfg.precision));
}

function numberAt(vm: LuaVm, L: number, idx: number): number {
  return vm.isInteger(L, idx) ? Number(vm.toInteger(L, idx)) : vm.toNumber(L, idx);
}

function encodeValue(vm: LuaVm, L: number, idx: number, w: ByteWriter, cfg: CjsonConfig, depth: number): void {
  const ty = vm.type(L, idx);
  switch (ty) {
    case T.STRING:
      encodeString(w, vm.viewBytes(L, idx));
      return;
    case T.NUMBER:
      encodeNumber(w, numberAt(vm, L, idx), cfg);
      return;
    case T.BOOLEAN:
      w.ascii(vm.toBoolean(L, idx) ? "true" : "false");
      return;
    case T.NIL:
    case T.NONE:
      w.ascii("null");
      return;
    case T.LIGHTUSERDATA:
      if (vm.toUserdata(L, idx) === 0) {
        w.ascii("null");
        return;
      }
      break;
    case T.TABLE: {
      const next = depth + 1;
      if (next > cfg.encodeMaxDepth) throw new LuaRaise(`Cannot serialise, excessive nesting (${next})`);
      const t = vm.abs(L, idx);
      vm.ensureStack(L, 4);
      const len = arrayLength(vm, L, t, cfg);
      if (len > 0) encodeArray(vm, L, t, len, w, cfg, next);
      else encodeObject(vm, L, t, w, cfg, next);
      return;
    }
  }
  throw new LuaRaise(`Cannot serialise ${typeName(ty)}: type not supported`);
}

/** lua-cjson's lua_array_length: -1 for "not an array", else the largest index. */
function arrayLength(vm: LuaVm, L: number, t: number, cfg: CjsonConfig): number {
  let max = 0;
  let items = 0;
  vm.pushNil(L);
  while (vm.next(L, t)) {
    if (vm.type(L, -2) === T.NUMBER) {
      const k = numberAt(vm, L, -2);
      if (Math.floor(k) === k && k >= 1) {
        if (k > max) max = k;
        items++;
        vm.pop(L, 1);
        continue;
      }
    }
    vm.pop(L, 2);
    return -1;
  }
  if (cfg.sparseRatio > 0 && max > items * cfg.sparseRatio && max > cfg.sparseSafe) {
    if (!cfg.sparseConvert) throw new LuaRaise("Cannot serialise table: excessively sparse array");
    return -1;
  }
  return max;
}

function encodeArray(vm: LuaVm, L: number, t: number, len: number, w: ByteWriter, cfg: CjsonConfig, depth: number): void {
  w.byte(0x5b);
  for (let i = 1; i <= len; i++) {
    if (i > 1) w.byte(0x2c);
    vm.rawGetI(L, t, i);
    encodeValue(vm, L, -1, w, cfg, depth);
    vm.pop(L, 1);
  }
  w.byte(0x5d);
}

function encodeObject(vm: LuaVm, L: number, t: number, w: ByteWriter, cfg: CjsonConfig, depth: number): void {
  w.byte(0x7b);
  let first = true;
  vm.pushNil(L);
  while (vm.next(L, t)) {
    if (!first) w.byte(0x2c);
    first = false;
    const kt = vm.type(L, -2);
    if (kt === T.NUMBER) {
      w.byte(0x22);
      encodeNumber(w, numberAt(vm, L, -2), cfg);
      w.byte(0x22);
    } else if (kt === T.STRING) {
      encodeString(w, vm.viewBytes(L, -2));
    } else {
      throw new LuaRaise("Cannot serialise table: table key must be a number or string");
    }
    w.byte(0x3a);
    encodeValue(vm, L, -1, w, cfg, depth);
    vm.pop(L, 1);
  }
  w.byte(0x7d);
}

// ---------------------------------------------------------------- decode

const NUMBER_RE = /^-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?/;

class JsonDecoder {
  private pos = 0;
  private depth = 0;
  private readonly text: string;

  constructor(
    private readonly vm: LuaVm,
    private readonly L: number,
    private readonly b: Uint8Array,
    private readonly cfg: CjsonConfig,
  ) {
    // Only used for number scanning; the bytes are authoritative for strings.
    this.text = "";
  }

  decodeDocument(): void {
    this.skipSpace();
    this.value("value");
    this.skipSpace();
    if (this.pos < this.b.length) this.fail("the end", this.tokenName());
  }

  private fail(expected: string, found: string, at = this.pos): never {
    throw new LuaRaise(`Expected ${expected} but found ${found} at character ${at + 1}`);
  }

  private tokenName(): string {
    if (this.pos >= this.b.length) return "T_END";
    const c = this.b[this.pos];
    switch (c) {
      case 0x7b:
        return "T_OBJ_BEGIN";
      case 0x7d:
        return "T_OBJ_END";
      case 0x5b:
        return "T_ARR_BEGIN";
      case 0x5d:
        return "T_ARR_END";
      case 0x2c:
        return "T_COMMA";
      case 0x3a:
        return "T_COLON";
      case 0x22:
        return "T_STRING";
    }
    return "invalid token";
  }

  private skipSpace(): void {
    const b = this.b;
    while (this.pos < b.length) {
      const c = b[this.pos];
      if (c === 0x20 || c === 0x09 || c === 0x0a || c === 0x0d) this.pos++;
      else break;
    }
  }

  private literal(word: string): boolean {
    if (this.pos + word.length > this.b.length) return false;
    for (let i = 0; i < word.length; i++) if (this.b[this.pos + i] !== word.charCodeAt(i)) return false;
    this.pos += word.length;
    return true;
  }

  private value(expected: string): void {
    const vm = this.vm;
    const L = this.L;
    vm.ensureStack(L, 4);
    if (this.pos >= this.b.length) this.fail(expected, "T_END");
    const c = this.b[this.pos];
    if (c === 0x7b) return this.object();
    if (c === 0x5b) return this.array();
    if (c === 0x22) {
      vm.pushBytes(L, this.string());
      return;
    }
    if (c === 0x2d || (c >= 0x30 && c <= 0x39)) {
      let end = this.pos;
      while (end < this.b.length && end - this.pos < 400) {
        const d = this.b[end];
        if ((d >= 0x30 && d <= 0x39) || d === 0x2d || d === 0x2b || d === 0x2e || d === 0x65 || d === 0x45) end++;
        else break;
      }
      const token = String.fromCharCode(...this.b.subarray(this.pos, end));
      const m = NUMBER_RE.exec(token);
      if (!m || m[0].length !== token.length) this.fail(expected, "invalid token");
      const n = Number(token);
      const integral = !/[.eE]/.test(token) && Number.isSafeInteger(n);
      if (integral && !Object.is(n, -0)) vm.pushInteger(L, n);
      else vm.pushNumber(L, n);
      this.pos = end;
      return;
    }
    if (this.literal("true")) return vm.pushBoolean(L, true);
    if (this.literal("false")) return vm.pushBoolean(L, false);
    if (this.literal("null")) return vm.pushLightUserdata(L, 0);
    this.fail(expected, this.tokenName());
  }

  private enter(): void {
    this.depth++;
    if (this.depth > this.cfg.decodeMaxDepth) {
      throw new LuaRaise(`Found too many nested data structures (${this.depth}) at character ${this.pos + 1}`);
    }
  }

  private array(): void {
    const vm = this.vm;
    const L = this.L;
    this.enter();
    this.pos++;
    vm.newTable(L, 0, 0);
    const t = vm.top(L);
    this.skipSpace();
    if (this.b[this.pos] === 0x5d) {
      this.pos++;
      this.depth--;
      return;
    }
    for (let i = 1; ; i++) {
      this.skipSpace();
      this.value("value");
      vm.rawSetI(L, t, i);
      this.skipSpace();
      const c = this.b[this.pos];
      if (c === 0x5d) {
        this.pos++;
        break;
      }
      if (c !== 0x2c) this.fail("comma or array end", this.tokenName());
      this.pos++;
    }
    this.depth--;
  }

  private object(): void {
    const vm = this.vm;
    const L = this.L;
    this.enter();
    this.pos++;
    vm.newTable(L, 0, 0);
    const t = vm.top(L);
    this.skipSpace();
    if (this.b[this.pos] === 0x7d) {
      this.pos++;
      this.depth--;
      return;
    }
    for (;;) {
      this.skipSpace();
      if (this.b[this.pos] !== 0x22) this.fail("object key string", this.tokenName());
      vm.pushBytes(L, this.string());
      this.skipSpace();
      if (this.b[this.pos] !== 0x3a) this.fail("colon", this.tokenName());
      this.pos++;
      this.skipSpace();
      this.value("value");
      vm.rawSet(L, t);
      this.skipSpace();
      const c = this.b[this.pos];
      if (c === 0x7d) {
        this.pos++;
        break;
      }
      if (c !== 0x2c) this.fail("comma or object end", this.tokenName());
      this.pos++;
    }
    this.depth--;
  }

  /** Reads a JSON string starting at the opening quote; returns its bytes. */
  private string(): Uint8Array {
    const b = this.b;
    const start = this.pos;
    this.pos++;
    const out = new ByteWriter();
    let run = this.pos;
    while (this.pos < b.length) {
      const c = b[this.pos];
      if (c === 0x22) {
        out.append(b.subarray(run, this.pos));
        this.pos++;
        return out.bytes().slice();
      }
      if (c !== 0x5c) {
        this.pos++;
        continue;
      }
      out.append(b.subarray(run, this.pos));
      const e = b[this.pos + 1];
      let skip = 2;
      switch (e) {
        case 0x22:
        case 0x5c:
        case 0x2f:
          out.byte(e);
          break;
        case 0x62:
          out.byte(0x08);
          break;
        case 0x66:
          out.byte(0x0c);
          break;
        case 0x6e:
          out.byte(0x0a);
          break;
        case 0x72:
          out.byte(0x0d);
          break;
        case 0x74:
          out.byte(0x09);
          break;
        case 0x75: {
          let code = this.hex4(this.pos + 2);
          skip = 6;
          if (code >= 0xd800 && code <= 0xdbff) {
            const low = b[this.pos + 6] === 0x5c && b[this.pos + 7] === 0x75 ? this.hex4(this.pos + 8) : -1;
            if (low < 0xdc00 || low > 0xdfff) this.fail("string", "invalid token", start);
            code = 0x10000 + ((code - 0xd800) << 10) + (low - 0xdc00);
            skip = 12;
          } else if (code >= 0xdc00 && code <= 0xdfff) {
            this.fail("string", "invalid token", start);
          }
          out.append(new TextEncoder().encode(String.fromCodePoint(code)));
          break;
        }
        default:
          this.fail("string", "invalid token", start);
      }
      this.pos += skip;
      run = this.pos;
    }
    return this.fail("string", "T_END", start);
  }

  private hex4(at: number): number {
    if (at + 4 > this.b.length) return -1;
    let v = 0;
    for (let i = 0; i < 4; i++) {
      const c = this.b[at + i];
      let d: number;
      if (c >= 0x30 && c <= 0x39) d = c - 0x30;
      else if (c >= 0x61 && c <= 0x66) d = c - 0x57;
      else if (c >= 0x41 && c <= 0x46) d = c - 0x37;
      else return this.fail("string", "invalid token", this.pos);
      v = v * 16 + d;
    }
    return v;
  }
}

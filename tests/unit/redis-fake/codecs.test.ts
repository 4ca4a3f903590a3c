/**
 * The libraries Redis gives scripts: cmsgpack, cjson, bit and struct, on the fake and (with
 * REDIS_URL) on a real redis-server.
 *
 * Outside references: the `msgpackr` npm package (MessagePack specification encoder and
 * decoder) for cmsgpack; JavaScript's JSON (ECMA-404) for cjson; LuaBitOp's documented
 * examples (bitop.luajit.org/api.html, from memory) for bit. Exact byte layouts and error
 * texts were measured on redis-server 7.0.15.
 */
import { pack as mpPack, Packr, unpack as mpUnpack } from "msgpackr";
import type { Redis } from "ioredis";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { backends, evalBuffer } from "./backends";

// BullMQ packs its script arguments with these msgpackr options.
const bullmqPackr = new Packr({ useRecords: false, encodeUndefinedAsNil: true });

describe.each(backends())("script libraries on $name", ({ connect }) => {
  let r: Redis;
  beforeAll(() => {
    r = connect();
  });
  afterAll(async () => {
    await r.quit();
  });

  const ev = (script: string, ...args: (string | number | Buffer)[]) => r.eval(script, 0, ...args);
  const evBuf = (script: string, ...args: (string | number | Buffer)[]) => evalBuffer(r, script, 0, ...args) as Promise<Buffer>;
  const hex = async (script: string, ...args: (string | number | Buffer)[]) => (await evBuf(script, ...args)).toString("hex");

  describe("cmsgpack", () => {
    it("packs with the smallest integer formats and float32 when exact", async () => {
      // Byte layout measured on redis-server 7.0.15 (MessagePack spec: ca float32, cb float64,
      // cd uint16, ce uint32, cf uint64, d3 int64, d1 int16, d9 str8).
      expect(await hex("return cmsgpack.pack(1.5, 0.1, -1, 300, 70000, 5000000000, -5000000000, -200)")).toBe(
        "ca3fc00000" + "cb3fb999999999999a" + "ff" + "cd012c" + "ce00011170" + "cf000000012a05f200" + "d3fffffffed5fa0e00" + "d1ff38",
      );
      expect(await hex("return cmsgpack.pack({1, 2, 'x'})")).toBe("930102a178");
      expect(await hex("return cmsgpack.pack({})")).toBe("90");
      expect(await hex("return cmsgpack.pack({a = 1})")).toBe("81a16101");
      expect(await hex("return cmsgpack.pack(string.rep('a', 40))")).toBe("d928" + "61".repeat(40));
    });

    it("packs what msgpackr reads back as the same values", async () => {
      const packed = await evBuf("return cmsgpack.pack({1, -7, 1700000000123, 0.25, 'caf\\195\\169', true, false, {k = 'v', n = 2}})");
      // 1700000000123 needs uint64 (cf), which msgpackr reads as a BigInt.
      expect(mpUnpack(packed)).toEqual([1, -7, 1700000000123n, 0.25, "café", true, false, { k: "v", n: 2 }]);
    });

    it("unpacks what BullMQ's msgpackr packs, numbers above 2^31 exact", async () => {
      const value = {
        name: "fit-river-banks",
        timestamp: 1700000000123,
        delay: 0,
        negative: -1099511627776,
        big: 2 ** 53 - 1,
        ratio: 0.1,
        attempts: 3,
        flags: [true, false],
        text: "Ünïcödé 🌊",
      };
      const packed = bullmqPackr.pack(value);
      const json = await ev("return cjson.encode(cmsgpack.unpack(ARGV[1]))", packed);
      // cjson prints numbers as %.14g, so compare those that survive that exactly.
      const back = JSON.parse(json as string);
      expect(back).toMatchObject({ name: value.name, timestamp: value.timestamp, delay: 0, negative: value.negative, ratio: 0.1, attempts: 3, flags: [true, false], text: value.text });
      // Integers stay integers in Lua: concatenation prints no ".0", arithmetic is exact.
      expect(await ev("local t = cmsgpack.unpack(ARGV[1]) return 'repeat:' .. t.timestamp", packed)).toBe("repeat:1700000000123");
      expect(await ev("local t = cmsgpack.unpack(ARGV[1]) return tostring(t.big - 1 == 9007199254740990)", packed)).toBe("true");
    });

    it("round-trips every byte value and the str8/str16/str32 sizes", async () => {
      const all = Buffer.from(Array.from({ length: 256 }, (_, i) => i));
      for (const s of [all, Buffer.alloc(300, 0xfe), Buffer.alloc(70000, 0x80)]) {
        const back = await evBuf("return cmsgpack.unpack(cmsgpack.pack(ARGV[1]))", s);
        expect(back.equals(s)).toBe(true);
      }
      // A msgpack str whose header makes the packed bytes invalid UTF-8 (d9 then a length byte).
      const packed = mpPack("x".repeat(65));
      expect(() => new TextDecoder("utf-8", { fatal: true }).decode(packed)).toThrow();
      expect(await ev("return cmsgpack.unpack(ARGV[1])", packed)).toBe("x".repeat(65));
    });

    it("returns several objects, and offsets from unpack_one and unpack_limit", async () => {
      expect(await ev("return {cmsgpack.unpack(ARGV[1])}", mpPack(1) as Buffer)).toEqual([1]);
      expect(await ev("return {cmsgpack.unpack(cmsgpack.pack(1, 'two', 3))}")).toEqual([1, "two", 3]);
      expect(await ev("return {cmsgpack.unpack_one(cmsgpack.pack(1, 2))}")).toEqual([1, 1]);
      expect(await ev("return {cmsgpack.unpack_one(cmsgpack.pack(1, 2), 1)}")).toEqual([-1, 2]);
      expect(await ev("return {cmsgpack.unpack_limit(cmsgpack.pack(1, 2, 3), 2)}")).toEqual([2, 1, 2]);
    });

    it("stops nesting at 16 levels", async () => {
      expect(await hex("local t = {} local c = t for i = 1, 20 do c[1] = {} c = c[1] end return cmsgpack.pack(t)")).toBe("91".repeat(16) + "c0");
    });

    it("reports truncated and unknown input", async () => {
      await expect(ev("return cmsgpack.unpack(ARGV[1])", Buffer.from([0x82]))).rejects.toThrow(/Missing bytes in input\./);
      await expect(ev("return cmsgpack.unpack(ARGV[1])", Buffer.from([0xc1]))).rejects.toThrow(/Bad data format in input\./);
    });
  });

  describe("cjson", () => {
    it("encodes like lua-cjson: %.14g numbers, escaped slashes, sparse arrays", async () => {
      expect(await ev("return cjson.encode({1, 2, 3})")).toBe("[1,2,3]");
      expect(await ev("return cjson.encode({1, 2, nil, 4})")).toBe("[1,2,null,4]");
      expect(await ev("return cjson.encode({[1] = 1, [3] = 3})")).toBe("[1,null,3]");
      expect(await ev("return cjson.encode({})")).toBe("{}");
      expect(await ev("return cjson.encode({[1.5] = 1})")).toBe('{"1.5":1}');
      expect(await ev("return cjson.encode(12345678901234567)")).toBe("1.2345678901235e+16");
      expect(await ev("return cjson.encode(1700000000123)")).toBe("1700000000123");
      expect(await ev("return cjson.encode(-0.0)")).toBe("-0");
      expect(await ev("return cjson.encode(0.1 + 0.2)")).toBe("0.3");
      expect(await ev("return cjson.encode('a\"b\\\\c/\\n\\1')")).toBe('"a\\"b\\\\c\\/\\n\\u0001"');
      expect(await ev("return cjson.encode(string.char(127, 0, 8, 9, 12, 13, 31))")).toBe('"\\u007f\\u0000\\b\\t\\f\\r\\u001f"');
      expect(await ev("return cjson.encode({cjson.null, true, false})")).toBe("[null,true,false]");
    });

    it("refuses what lua-cjson refuses", async () => {
      await expect(ev("return cjson.encode({[1] = 1, [20] = 3})")).rejects.toThrow(/Cannot serialise table: excessively sparse array/);
      await expect(ev("return cjson.encode(0/0)")).rejects.toThrow(/Cannot serialise number: must not be NaN or Inf/);
      await expect(ev("return cjson.encode(tostring)")).rejects.toThrow(/Cannot serialise function: type not supported/);
      await expect(ev("return cjson.decode('[1,2')")).rejects.toThrow(/Expected comma or array end but found T_END at character 5/);
      await expect(ev("return cjson.decode('tru')")).rejects.toThrow(/Expected value but found invalid token at character 1/);
      await expect(ev("return cjson.decode('')")).rejects.toThrow(/Expected value but found T_END at character 1/);
    });

    it("round-trips documents as JavaScript's JSON reads them", async () => {
      const doc = { name: "Mill Brook", parts: [[1, 2.5], [3, -4]], tolerance: 0.05, closed: false, note: "é 🌊 \u0001", nested: { a: [true] } };
      const json = JSON.stringify(doc);
      const back = await ev("return cjson.encode(cjson.decode(ARGV[1]))", json);
      expect(JSON.parse(back as string)).toEqual(doc);
      expect(await ev("return cjson.decode(ARGV[1]).parts[2][2]", json)).toBe(-4);
      expect(await ev("return cjson.decode('\"\\\\ud83d\\\\ude00\"')")).toBe("😀");
      expect(await ev("return tostring(cjson.decode('[null]')[1] == cjson.null)")).toBe("true");
    });
  });

  describe("bit (LuaBitOp)", () => {
    it("works on 32-bit two's complement values", async () => {
      expect(
        await ev(
          "return {bit.band(0xffffffff, 0x0f0f), bit.tobit(0xffffffff), bit.lshift(1, 31), bit.bnot(0), bit.rshift(-1, 28), bit.arshift(-16, 2), bit.bor(1, 2, 4), bit.bxor(0xff, 0x0f)}",
        ),
      ).toEqual([3855, -1, -2147483648, -1, 15, -4, 7, 240]);
      // LuaBitOp API documentation examples.
      expect(await ev("return {bit.tohex(1), bit.tohex(-1), bit.tohex(0x87654321, -4), bit.tohex(255, 2)}")).toEqual([
        "00000001",
        "ffffffff",
        "4321",
        "ff",
      ]);
      expect(await ev("return {bit.tohex(bit.rol(0x12345678, 12)), bit.tohex(bit.ror(0x12345678, 12)), bit.tohex(bit.bswap(0x12345678))}")).toEqual([
        "45678123",
        "67812345",
        "78563412",
      ]);
    });
  });

  describe("struct", () => {
    it("packs and unpacks like Roberto Ierusalimschy's struct library on x86-64", async () => {
      expect(await hex("return struct.pack('>I2', 258) .. struct.pack('<i4', -2)")).toBe("0102feffffff");
      expect(await ev("return {struct.unpack('>I2i4', struct.pack('>I2i4', 258, -7))}")).toEqual([258, -7, 7]);
      expect(await ev("return struct.size('>I2i4d')")).toBe(14);
      expect(await ev("return {struct.unpack('s', struct.pack('s', 'abc'))}")).toEqual(["abc", 5]);
      expect(await ev("return {struct.unpack('<l', struct.pack('<l', -5000000000))}")).toEqual([-5000000000, 9]);
    });
  });
});

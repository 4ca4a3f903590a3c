/**
 * Number formatting as Redis's C code does it, so the fake prints numbers byte for byte
 * like a real server.
 *
 * Contract: `formatG(n, p)` equals C's `printf("%.<p>g", n)` (glibc), which Redis uses
 * - with p = 17 when a Lua number is passed as a command argument (`redis.call("SET", k, 0.1)`
 *   stores "0.10000000000000001", measured on redis-server 7.0.15);
 * - with p = 14 in `cjson.encode` and in Lua 5.1's `tostring` (LUAI_NUMFFORMAT "%.14g").
 * `formatRedisDouble` is the shortest round-trip form that Redis 7 replies with for doubles
 * (ZSCORE, ZINCRBY, INCRBYFLOAT): JavaScript's `String(n)` except for exponent spelling.
 *
 * Not covered yet:
 * - NaN's sign (glibc may print "-nan"); the fake always prints "nan".
 */

/** C's `%.{precision}g` for a double. */
export function formatG(n: number, precision: number): string {
  if (Number.isNaN(n)) return "nan";
  if (n === Infinity) return "inf";
  if (n === -Infinity) return "-inf";
  if (n === 0) return Object.is(n, -0) ? "-0" : "0";
  const p = Math.max(1, precision);
  const [mantissa, expText] = n.toExponential(p - 1).split("e");
  const exp = Number(expText);
  if (exp < -4 || exp >= p) {
    const m = stripZeros(mantissa);
    const sign = exp < 0 ? "-" : "+";
    return `${m}e${sign}${String(Math.abs(exp)).padStart(2, "0")}`;
  }
  return stripZeros(n.toFixed(Math.max(0, p - 1 - exp)));
}

function stripZeros(s: string): string {
  if (!s.includes(".")) return s;
  return s.replace(/0+$/, "").replace(/\.$/, "");
}

/** A double as Redis 7 replies with it: shortest round trip, "inf"/"-inf"/"nan". */
export function formatRedisDouble(n: number): string {
  if (Number.isNaN(n)) return "nan";
  if (n === Infinity) return "inf";
  if (n === -Infinity) return "-inf";
  return String(n);
}

/**
 * A Lua number passed to `redis.call` as it becomes a command argument. Lua 5.1 numbers are
 * doubles, so a 64-bit integer is formatted as the double it would have been there.
 */
export function formatLuaArgument(n: number | bigint): string {
  return formatG(Number(n), 17);
}

/**
 * Sorted-set and list commands of the in-memory Redis, working on the live values of the key
 * space (store.ts) instead of ioredis-mock's copy-per-access emulators. These are the
 * commands on BullMQ's hot paths: every job passes through its wait list, its active list,
 * its marker and delayed/prioritized sets and its completed or failed set.
 *
 * Contract (Redis command reference, redis.io/commands/<name>; checked against
 * redis-server 7.0.15 by tests/integration/queue/redis-commands.contract.test.ts):
 * - ZADD [NX|XX] [GT|LT] [CH] [INCR], ZREM, ZCARD, ZSCORE, ZRANGE (by rank, optionally REV),
 *   ZREVRANGE, ZRANGEBYSCORE, ZREVRANGEBYSCORE, ZCOUNT, ZREMRANGEBYSCORE, ZREMRANGEBYRANK,
 *   ZRANGEBYLEX, ZLEXCOUNT, ZPOPMIN, ZPOPMAX: members ordered by score, then by member bytes;
 *   score bounds with "(", "-inf", "+inf" and any float syntax; scores replied as Redis 7.0
 *   does ("%.17g").
 * - LPUSH, RPUSH, LLEN, LRANGE, LINDEX, LSET, LREM, LTRIM, LPOP, RPOP (with count), RPOPLPUSH,
 *   LMOVE with Redis's index rules (negative indexes count from the end, out-of-range
 *   indexes are clamped).
 * - A sorted set or list that becomes empty is deleted; a key of another type gives WRONGTYPE.
 *
 * Not covered yet:
 * - ZRANGE's BYSCORE/BYLEX/LIMIT forms and ZRANGESTORE, ZUNION/ZINTER/ZDIFF and their STORE
 *   forms, ZRANDMEMBER, ZMSCORE, ZRANK/ZREVRANK, BLPOP/BRPOP/BLMOVE (these stay
 *   ioredis-mock's).
 */
import { formatG } from "./number-format";
import type { KeySpace, SortedIndex, ZsetEntry } from "./store";

export type Arg = string | Buffer;

export interface CollectionHost {
  readonly keyspace: KeySpace;
}

export const WRONGTYPE = "WRONGTYPE Operation against a key holding the wrong kind of value";

type Zset = Map<string, ZsetEntry>;

function zsetAt(host: CollectionHost, key: string): Zset | undefined {
  const v = host.keyspace.peek(key);
  if (v === undefined) return undefined;
  if (!(v instanceof Map)) throw new Error(WRONGTYPE);
  return v as Zset;
}

function listAt(host: CollectionHost, key: string): (string | Buffer)[] | undefined {
  const v = host.keyspace.peek(key);
  if (v === undefined) return undefined;
  if (!Array.isArray(v)) throw new Error(WRONGTYPE);
  return v as (string | Buffer)[];
}

/** Saves a changed collection, deleting the key when it became empty. */
function commit(host: CollectionHost, key: string, size: number): void {
  if (size === 0) host.keyspace.delete(key);
  else host.keyspace.touched(key);
}

/** A score as ZADD accepts it ("inf", "-inf", any float; not NaN). */
function parseScore(text: Arg): number {
  const s = String(text).trim().toLowerCase();
  let n: number;
  if (s === "inf" || s === "+inf" || s === "infinity" || s === "+infinity") n = Infinity;
  else if (s === "-inf" || s === "-infinity") n = -Infinity;
  else n = s === "" ? NaN : Number(s);
  if (Number.isNaN(n)) throw new Error("ERR value is not a valid float");
  return n;
}

export interface ScoreBound {
  value: number;
  exclusive: boolean;
}

export function parseScoreBound(text: Arg): ScoreBound {
  let s = String(text);
  const exclusive = s.startsWith("(");
  if (exclusive) s = s.slice(1);
  const lower = s.toLowerCase();
  let value: number;
  if (lower === "-inf") value = -Infinity;
  else if (lower === "+inf" || lower === "inf") value = Infinity;
  else value = s.trim() === "" ? NaN : Number(s);
  if (Number.isNaN(value)) throw new Error("ERR min or max is not a float");
  return { value, exclusive };
}

function parseInteger(text: Arg | undefined): number {
  const s = String(text ?? "");
  if (!/^-?\d+$/.test(s)) throw new Error("ERR value is not an integer or out of range");
  return Number(s);
}

/** Redis's rank range: clamps negative and out-of-range indexes; null when empty. */
function rankRange(len: number, startText: Arg, stopText: Arg): [number, number] | null {
  let start = parseInteger(startText);
  let stop = parseInteger(stopText);
  if (start < 0) start = len + start;
  if (stop < 0) stop = len + stop;
  if (start < 0) start = 0;
  if (start > stop || start >= len) return null;
  if (stop >= len) stop = len - 1;
  return [start, stop];
}

function withScores(entries: ZsetEntry[], scores: boolean): string[] {
  if (!scores) return entries.map((e) => e.value);
  const out: string[] = [];
  for (const e of entries) out.push(e.value, formatG(e.score, 17));
  return out;
}

/** Index range [from, to) of entries whose score is within [min, max]. */
function scoreSpan(index: SortedIndex, min: ScoreBound, max: ScoreBound): [number, number] {
  const from = index.scoreBound(min.value, min.exclusive);
  const to = index.scoreBound(max.value, !max.exclusive);
  return [from, Math.max(from, to)];
}

interface LexBound {
  value: string | null;
  exclusive: boolean;
  infinity: -1 | 0 | 1;
}

function parseLexBound(text: Arg): LexBound {
  const s = String(text);
  if (s === "-") return { value: null, exclusive: false, infinity: -1 };
  if (s === "+") return { value: null, exclusive: false, infinity: 1 };
  if (s.startsWith("[") || s.startsWith("(")) return { value: s.slice(1), exclusive: s[0] === "(", infinity: 0 };
  throw new Error("ERR min or max not valid string range item");
}

function lexInRange(member: string, min: LexBound, max: LexBound, compare: (a: string, b: string) => number): boolean {
  const aboveMin = min.infinity === -1 || (min.infinity === 0 && (min.exclusive ? compare(member, min.value!) > 0 : compare(member, min.value!) >= 0));
  const belowMax = max.infinity === 1 || (max.infinity === 0 && (max.exclusive ? compare(member, max.value!) < 0 : compare(member, max.value!) <= 0));
  return aboveMin && belowMax;
}

function sameValue(a: string | Buffer, b: string | Buffer): boolean {
  if (typeof a === "string" && typeof b === "string") return a === b;
  return Buffer.from(a).equals(Buffer.from(b));
}

// ---------------------------------------------------------------- sorted sets

export function popExtreme(host: CollectionHost, key: string, count: number, max: boolean): string[] {
  const z = zsetAt(host, key);
  if (!z || count <= 0) return [];
  const index = host.keyspace.sortedIndex(z);
  const n = Math.min(count, index.entries.length);
  const taken = max ? index.entries.splice(index.entries.length - n, n).reverse() : index.entries.splice(0, n);
  for (const e of taken) z.delete(e.value);
  commit(host, key, z.size);
  return withScores(taken, true);
}

function rangeByScoreReply(host: CollectionHost, args: Arg[], reverse: boolean): string[] {
  const [key, first, second, ...rest] = args;
  const z = zsetAt(host, String(key));
  const min = parseScoreBound(reverse ? second : first);
  const max = parseScoreBound(reverse ? first : second);
  let scores = false;
  let offset = 0;
  let count = -1;
  for (let i = 0; i < rest.length; i++) {
    const word = String(rest[i]).toUpperCase();
    if (word === "WITHSCORES") scores = true;
    else if (word === "LIMIT" && i + 2 < rest.length) {
      offset = parseInteger(rest[i + 1]);
      count = parseInteger(rest[i + 2]);
      i += 2;
    } else throw new Error("ERR syntax error");
  }
  if (!z || offset < 0) return [];
  const index = host.keyspace.sortedIndex(z);
  const [from, to] = scoreSpan(index, min, max);
  let span = index.entries.slice(from, to);
  if (reverse) span.reverse();
  span = count < 0 ? span.slice(offset) : span.slice(offset, offset + count);
  return withScores(span, scores);
}

function rankRangeReply(host: CollectionHost, args: Arg[], reverse: boolean): string[] {
  const [key, start, stop, ...rest] = args;
  let scores = false;
  for (const a of rest) {
    const word = String(a).toUpperCase();
    if (word === "WITHSCORES") scores = true;
    else if (word === "REV") reverse = !reverse;
    else throw new Error("ERR syntax error");
  }
  const z = zsetAt(host, String(key));
  if (!z) {
    rankRange(0, start, stop);
    return [];
  }
  const entries = host.keyspace.sortedIndex(z).entries;
  const range = rankRange(entries.length, start, stop);
  if (!range) return [];
  const [a, b] = range;
  const span = reverse ? entries.slice(entries.length - 1 - b, entries.length - a).reverse() : entries.slice(a, b + 1);
  return withScores(span, scores);
}

export const collectionCommands: Record<string, (this: CollectionHost, ...args: Arg[]) => unknown> = {
  zadd(key, ...rest) {
    const flags = new Set<string>();
    let i = 0;
    while (i < rest.length && ["NX", "XX", "GT", "LT", "CH", "INCR"].includes(String(rest[i]).toUpperCase())) {
      flags.add(String(rest[i]).toUpperCase());
      i++;
    }
    const pairs = rest.slice(i);
    if (pairs.length === 0 || pairs.length % 2 !== 0) throw new Error("ERR syntax error");
    if (flags.has("NX") && flags.has("XX")) throw new Error("ERR XX and NX options at the same time are not compatible");
    if ((flags.has("GT") && flags.has("LT")) || (flags.has("NX") && (flags.has("GT") || flags.has("LT")))) {
      throw new Error("ERR GT, LT, and/or NX options at the same time are not compatible");
    }
    if (flags.has("INCR") && pairs.length > 2) throw new Error("ERR INCR option supports a single increment-element pair");
    const scores = [];
    for (let p = 0; p < pairs.length; p += 2) scores.push(parseScore(pairs[p]));
    const k = String(key);
    let z = zsetAt(this, k);
    if (!z) {
      if (flags.has("XX")) return flags.has("INCR") ? null : 0;
      z = new Map();
      this.keyspace.put(k, z);
    }
    const index = this.keyspace.sortedIndex(z);
    let added = 0;
    let changed = 0;
    let incrResult: string | null = null;
    for (let p = 0; p < pairs.length; p += 2) {
      const member = String(pairs[p + 1]);
      let score = scores[p / 2];
      const existing = z.get(member);
      if (existing) {
        if (flags.has("NX")) continue;
        if (flags.has("INCR")) score = existing.score + score;
        if (Number.isNaN(score)) throw new Error("ERR resulting score is not a number (NaN)");
        if ((flags.has("GT") && !(score > existing.score)) || (flags.has("LT") && !(score < existing.score))) continue;
        if (score !== existing.score) {
          index.remove(existing);
          const entry = { score, value: member };
          z.set(member, entry);
          index.insert(entry);
          changed++;
        }
        incrResult = formatG(score, 17);
      } else {
        if (flags.has("XX")) continue;
        const entry = { score, value: member };
        z.set(member, entry);
        index.insert(entry);
        added++;
        incrResult = formatG(score, 17);
      }
    }
    commit(this, k, z.size);
    if (flags.has("INCR")) return incrResult;
    return flags.has("CH") ? added + changed : added;
  },
  zrem(key, ...members) {
    if (members.length === 0) throw new Error("ERR wrong number of arguments for 'zrem' command");
    const k = String(key);
    const z = zsetAt(this, k);
    if (!z) return 0;
    const index = this.keyspace.sortedIndex(z);
    let removed = 0;
    for (const m of members) {
      const entry = z.get(String(m));
      if (!entry) continue;
      index.remove(entry);
      z.delete(entry.value);
      removed++;
    }
    if (removed) commit(this, k, z.size);
    return removed;
  },
  zcard(key) {
    return zsetAt(this, String(key))?.size ?? 0;
  },
  zscore(key, member) {
    const e = zsetAt(this, String(key))?.get(String(member));
    return e ? formatG(e.score, 17) : null;
  },
  zrange(...args) {
    if (args.slice(3).some((a) => ["BYSCORE", "BYLEX", "LIMIT"].includes(String(a).toUpperCase()))) {
      throw new Error("ERR the in-memory Redis supports ZRANGE by rank only; use ZRANGEBYSCORE or ZRANGEBYLEX");
    }
    return rankRangeReply(this, args, false);
  },
  zrevrange(...args) {
    return rankRangeReply(this, args, true);
  },
  zrangebyscore(...args) {
    return rangeByScoreReply(this, args, false);
  },
  zrevrangebyscore(...args) {
    return rangeByScoreReply(this, args, true);
  },
  zcount(key, minText, maxText) {
    const min = parseScoreBound(minText);
    const max = parseScoreBound(maxText);
    const z = zsetAt(this, String(key));
    if (!z) return 0;
    const [from, to] = scoreSpan(this.keyspace.sortedIndex(z), min, max);
    return to - from;
  },
  zremrangebyscore(key, minText, maxText) {
    const min = parseScoreBound(minText);
    const max = parseScoreBound(maxText);
    const k = String(key);
    const z = zsetAt(this, k);
    if (!z) return 0;
    const index = this.keyspace.sortedIndex(z);
    const [from, to] = scoreSpan(index, min, max);
    const removed = index.entries.splice(from, to - from);
    for (const e of removed) z.delete(e.value);
    if (removed.length) commit(this, k, z.size);
    return removed.length;
  },
  zremrangebyrank(key, start, stop) {
    const k = String(key);
    const z = zsetAt(this, k);
    if (!z) {
      rankRange(0, start, stop);
      return 0;
    }
    const index = this.keyspace.sortedIndex(z);
    const range = rankRange(index.entries.length, start, stop);
    if (!range) return 0;
    const removed = index.entries.splice(range[0], range[1] - range[0] + 1);
    for (const e of removed) z.delete(e.value);
    commit(this, k, z.size);
    return removed.length;
  },
  zrangebylex(key, minText, maxText, ...rest) {
    const min = parseLexBound(minText);
    const max = parseLexBound(maxText);
    let offset = 0;
    let count = -1;
    if (rest.length) {
      if (rest.length !== 3 || String(rest[0]).toUpperCase() !== "LIMIT") throw new Error("ERR syntax error");
      offset = parseInteger(rest[1]);
      count = parseInteger(rest[2]);
    }
    const z = zsetAt(this, String(key));
    if (!z || offset < 0) return [];
    const index = this.keyspace.sortedIndex(z);
    const compare = (a: string, b: string) => Buffer.compare(Buffer.from(a), Buffer.from(b));
    const inRange = index.entries.filter((e) => lexInRange(e.value, min, max, compare)).map((e) => e.value);
    return count < 0 ? inRange.slice(offset) : inRange.slice(offset, offset + count);
  },
  zlexcount(key, minText, maxText) {
    const min = parseLexBound(minText);
    const max = parseLexBound(maxText);
    const z = zsetAt(this, String(key));
    if (!z) return 0;
    const compare = (a: string, b: string) => Buffer.compare(Buffer.from(a), Buffer.from(b));
    let n = 0;
    for (const e of this.keyspace.sortedIndex(z).entries) if (lexInRange(e.value, min, max, compare)) n++;
    return n;
  },
  zpopmin(key, count) {
    return popExtreme(this, String(key), count === undefined ? 1 : parseInteger(count), false);
  },
  zpopmax(key, count) {
    return popExtreme(this, String(key), count === undefined ? 1 : parseInteger(count), true);
  },

  // ---------------------------------------------------------------- lists
  lpush(key, ...values) {
    if (values.length === 0) throw new Error("ERR wrong number of arguments for 'lpush' command");
    const k = String(key);
    let list = listAt(this, k);
    if (!list) this.keyspace.put(k, (list = []));
    for (const v of values) list.unshift(v);
    this.keyspace.touched(k);
    return list.length;
  },
  rpush(key, ...values) {
    if (values.length === 0) throw new Error("ERR wrong number of arguments for 'rpush' command");
    const k = String(key);
    let list = listAt(this, k);
    if (!list) this.keyspace.put(k, (list = []));
    list.push(...values);
    this.keyspace.touched(k);
    return list.length;
  },
  llen(key) {
    return listAt(this, String(key))?.length ?? 0;
  },
  lrange(key, start, stop) {
    const list = listAt(this, String(key));
    const range = rankRange(list?.length ?? 0, start, stop);
    if (!list || !range) return [];
    return list.slice(range[0], range[1] + 1);
  },
  lindex(key, indexText) {
    const list = listAt(this, String(key));
    let i = parseInteger(indexText);
    if (!list) return null;
    if (i < 0) i = list.length + i;
    return i >= 0 && i < list.length ? list[i] : null;
  },
  lset(key, indexText, value) {
    const k = String(key);
    const list = listAt(this, k);
    if (!list) throw new Error("ERR no such key");
    let i = parseInteger(indexText);
    if (i < 0) i = list.length + i;
    if (i < 0 || i >= list.length) throw new Error("ERR index out of range");
    list[i] = value;
    this.keyspace.touched(k);
    return "OK";
  },
  lrem(key, countText, value) {
    const k = String(key);
    const count = parseInteger(countText);
    const list = listAt(this, k);
    if (!list) return 0;
    let removed = 0;
    const limit = count === 0 ? Infinity : Math.abs(count);
    if (count >= 0) {
      for (let i = 0; i < list.length && removed < limit; ) {
        if (sameValue(list[i], value)) {
          list.splice(i, 1);
          removed++;
        } else i++;
      }
    } else {
      for (let i = list.length - 1; i >= 0 && removed < limit; i--) {
        if (sameValue(list[i], value)) {
          list.splice(i, 1);
          removed++;
        }
      }
    }
    if (removed) commit(this, k, list.length);
    return removed;
  },
  ltrim(key, start, stop) {
    const k = String(key);
    const list = listAt(this, k);
    if (!list) {
      parseInteger(start);
      parseInteger(stop);
      return "OK";
    }
    const range = rankRange(list.length, start, stop);
    if (!range) list.length = 0;
    else {
      list.splice(range[1] + 1);
      list.splice(0, range[0]);
    }
    commit(this, k, list.length);
    return "OK";
  },
  lpop(key, countText) {
    return popEnd(this, String(key), countText, true);
  },
  rpop(key, countText) {
    return popEnd(this, String(key), countText, false);
  },
  rpoplpush(source, destination) {
    return move(this, String(source), String(destination), false, true);
  },
  lmove(source, destination, from, to) {
    const f = String(from).toUpperCase();
    const t = String(to).toUpperCase();
    if (!["LEFT", "RIGHT"].includes(f) || !["LEFT", "RIGHT"].includes(t)) throw new Error("ERR syntax error");
    return move(this, String(source), String(destination), f === "LEFT", t === "LEFT");
  },
};

function popEnd(host: CollectionHost, key: string, countText: Arg | undefined, left: boolean): unknown {
  const count = countText === undefined ? null : parseInteger(countText);
  if (count !== null && count < 0) throw new Error("ERR value is out of range, must be positive");
  const list = listAt(host, key);
  if (!list) return null;
  const n = count === null ? 1 : Math.min(count, list.length);
  const taken = left ? list.splice(0, n) : list.splice(list.length - n, n).reverse();
  commit(host, key, list.length);
  return count === null ? (taken[0] ?? null) : taken;
}

function move(host: CollectionHost, source: string, destination: string, fromLeft: boolean, toLeft: boolean): unknown {
  const src = listAt(host, source);
  const dst = listAt(host, destination);
  if (!src || src.length === 0) return null;
  const item = fromLeft ? src.shift()! : src.pop()!;
  let target = source === destination ? src : dst;
  if (!target) host.keyspace.put(destination, (target = []));
  if (toLeft) target.unshift(item);
  else target.push(item);
  if (source !== destination) commit(host, source, src.length);
  host.keyspace.touched(destination);
  return item;
}

/**
 * Redis streams for the in-memory Redis (ioredis-mock's own streams number entries by list
 * length, repeat ids after trimming and share one "polled" flag between readers).
 *
 * Contract (Redis command reference for XADD, XLEN, XRANGE, XREVRANGE, XDEL, XTRIM, XREAD):
 * - Entry ids are "<ms>-<seq>", strictly increasing; `*` takes the current time and bumps the
 *   sequence within one millisecond; `<ms>-*` and full explicit ids are accepted when greater
 *   than the last id ("ERR The ID specified in XADD is equal or smaller than the target stream
 *   top item" otherwise).
 * - XADD options NOMKSTREAM, MAXLEN/MINID with `=` or `~` and LIMIT; the fake always trims
 *   exactly, which `~` allows (it promises at least the threshold is kept).
 * - XRANGE/XREVRANGE with `-`, `+`, incomplete ids, `(` exclusive bounds and COUNT.
 * - XREAD [COUNT n] [BLOCK ms] STREAMS key... id...: entries after the given id; `$` means
 *   the last id at the time of the call. Blocking is done by the connection (fake-redis.ts).
 * - Replies: an entry is [id, [field, value, ...]]; XREAD gives [[key, entries], ...] or null.
 *
 * Not covered yet:
 * - Consumer groups (XGROUP, XREADGROUP, XACK, XPENDING, XCLAIM, XAUTOCLAIM), XINFO, XSETID.
 */

export interface StreamEntry {
  ms: number;
  seq: number;
  id: string;
  fields: (string | Buffer)[];
}

export class StreamState {
  entries: StreamEntry[] = [];
  lastMs = 0;
  lastSeq = 0;
  entriesAdded = 0;

  get lastId(): string {
    return `${this.lastMs}-${this.lastSeq}`;
  }
}

/** How a stream sits in the fake's key space: the wrapper object is copied, the state is shared. */
export interface StoredStream {
  __stream: StreamState;
}

export function isStoredStream(value: unknown): value is StoredStream {
  return typeof value === "object" && value !== null && (value as StoredStream).__stream instanceof StreamState;
}

export interface StreamId {
  ms: number;
  seq: number;
}

const INVALID_ID = "ERR Invalid stream ID specified as stream command argument";

/** Parses "ms-seq" or "ms" (seq defaulting to `defaultSeq`). */
export function parseId(text: string, defaultSeq: number): StreamId {
  const m = /^(\d+)(?:-(\d+))?$/.exec(text);
  if (!m) throw new Error(INVALID_ID);
  const ms = Number(m[1]);
  const seq = m[2] === undefined ? defaultSeq : Number(m[2]);
  if (!Number.isSafeInteger(ms) || !Number.isSafeInteger(seq)) throw new Error(INVALID_ID);
  return { ms, seq };
}

export function compareId(a: StreamId, b: StreamId): number {
  return a.ms - b.ms || a.seq - b.seq;
}

const MAX_SEQ = Number.MAX_SAFE_INTEGER;

/** A range bound for XRANGE: "-", "+", "(id", "id" or "ms". */
function parseBound(text: string, isStart: boolean): { id: StreamId; exclusive: boolean } {
  if (text === "-") return { id: { ms: 0, seq: 0 }, exclusive: false };
  if (text === "+") return { id: { ms: Number.MAX_SAFE_INTEGER, seq: MAX_SEQ }, exclusive: false };
  const exclusive = text.startsWith("(");
  const id = parseId(exclusive ? text.slice(1) : text, isStart ? 0 : MAX_SEQ);
  return { id, exclusive };
}

export function entryReply(e: StreamEntry): [string, (string | Buffer)[]] {
  return [e.id, e.fields.slice()];
}

export interface XaddPlan {
  noMkStream: boolean;
  trim: TrimPlan | null;
  id: string;
  fields: (string | Buffer)[];
}

export interface TrimPlan {
  strategy: "MAXLEN" | "MINID";
  threshold: string;
  limit: number | null;
}

function upper(arg: string | Buffer | undefined): string {
  return String(arg ?? "").toUpperCase();
}

/** Parses the arguments of XADD after the key. */
export function parseXadd(args: (string | Buffer)[]): XaddPlan {
  let i = 0;
  let noMkStream = false;
  let trim: TrimPlan | null = null;
  for (;;) {
    const word = upper(args[i]);
    if (word === "NOMKSTREAM") {
      noMkStream = true;
      i++;
    } else if (word === "MAXLEN" || word === "MINID") {
      const parsed = parseTrim(args, i);
      trim = parsed.plan;
      i = parsed.next;
    } else break;
  }
  const id = String(args[i++] ?? "");
  const fields = args.slice(i);
  if (!id || fields.length === 0 || fields.length % 2 !== 0) {
    throw new Error("ERR wrong number of arguments for 'xadd' command");
  }
  return { noMkStream, trim, id, fields };
}

/** Parses "MAXLEN|MINID [=|~] threshold [LIMIT count]" starting at `i`. */
export function parseTrim(args: (string | Buffer)[], i: number): { plan: TrimPlan; next: number } {
  const strategy = upper(args[i]) as "MAXLEN" | "MINID";
  i++;
  const op = String(args[i] ?? "");
  if (op === "=" || op === "~") i++;
  const threshold = args[i];
  if (threshold === undefined) throw new Error("ERR syntax error");
  i++;
  let limit: number | null = null;
  if (upper(args[i]) === "LIMIT") {
    limit = Number(args[i + 1]);
    if (!Number.isInteger(limit) || limit < 0) throw new Error("ERR The LIMIT argument must be >= 0.");
    i += 2;
  }
  if (strategy === "MAXLEN" && !/^\d+$/.test(String(threshold))) {
    throw new Error("ERR value is not an integer or out of range");
  }
  return { plan: { strategy, threshold: String(threshold), limit }, next: i };
}

/** Appends an entry; returns its id. `now` is the current time in milliseconds. */
export function appendEntry(s: StreamState, idText: string, fields: (string | Buffer)[], now: number): string {
  let ms: number;
  let seq: number;
  if (idText === "*") {
    if (now > s.lastMs) {
      ms = now;
      seq = 0;
    } else {
      ms = s.lastMs;
      seq = s.lastSeq + 1;
    }
  } else {
    const m = /^(\d+)-\*$/.exec(idText);
    if (m) {
      ms = Number(m[1]);
      if (!Number.isSafeInteger(ms)) throw new Error(INVALID_ID);
      seq = ms === s.lastMs && s.entriesAdded > 0 ? s.lastSeq + 1 : 0;
    } else {
      ({ ms, seq } = parseId(idText, 0));
    }
    if (ms === 0 && seq === 0) throw new Error("ERR The ID specified in XADD must be greater than 0-0");
    if (s.entriesAdded > 0 && compareId({ ms, seq }, { ms: s.lastMs, seq: s.lastSeq }) <= 0) {
      throw new Error("ERR The ID specified in XADD is equal or smaller than the target stream top item");
    }
  }
  const id = `${ms}-${seq}`;
  s.entries.push({ ms, seq, id, fields: fields.slice() });
  s.lastMs = ms;
  s.lastSeq = seq;
  s.entriesAdded++;
  return id;
}

/** Trims the stream; returns how many entries were removed. */
export function trimStream(s: StreamState, plan: TrimPlan): number {
  let remove = 0;
  if (plan.strategy === "MAXLEN") {
    remove = Math.max(0, s.entries.length - Number(plan.threshold));
  } else {
    const min = parseId(plan.threshold, 0);
    while (remove < s.entries.length && compareId(s.entries[remove], min) < 0) remove++;
  }
  if (plan.limit !== null && plan.limit > 0) remove = Math.min(remove, plan.limit);
  if (remove > 0) s.entries.splice(0, remove);
  return remove;
}

export function rangeEntries(s: StreamState, startText: string, endText: string, count: number | null, reverse: boolean): StreamEntry[] {
  const start = parseBound(startText, true);
  const end = parseBound(endText, false);
  const inRange = (e: StreamEntry) => {
    const a = compareId(e, start.id);
    const b = compareId(e, end.id);
    return (start.exclusive ? a > 0 : a >= 0) && (end.exclusive ? b < 0 : b <= 0);
  };
  const out: StreamEntry[] = [];
  if (count === 0) return out;
  const list = s.entries;
  if (!reverse) {
    for (let i = firstAtLeast(list, start.id); i < list.length; i++) {
      const e = list[i];
      if (!inRange(e)) {
        if (compareId(e, end.id) > 0) break;
        continue;
      }
      out.push(e);
      if (count !== null && out.length >= count) break;
    }
  } else {
    for (let i = list.length - 1; i >= 0; i--) {
      const e = list[i];
      if (!inRange(e)) {
        if (compareId(e, start.id) < 0) break;
        continue;
      }
      out.push(e);
      if (count !== null && out.length >= count) break;
    }
  }
  return out;
}

/** Index of the first entry with id >= `id` (binary search; entries are sorted). */
function firstAtLeast(list: StreamEntry[], id: StreamId): number {
  let lo = 0;
  let hi = list.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (compareId(list[mid], id) < 0) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** Entries strictly after `after`, at most `count`. */
export function entriesAfter(s: StreamState, after: StreamId, count: number | null): StreamEntry[] {
  const list = s.entries;
  let i = firstAtLeast(list, after);
  if (i < list.length && compareId(list[i], after) === 0) i++;
  const end = count === null ? list.length : Math.min(list.length, i + count);
  return list.slice(i, end);
}

export function deleteEntries(s: StreamState, ids: (string | Buffer)[]): number {
  let deleted = 0;
  for (const text of ids) {
    const id = parseId(String(text), 0);
    const i = firstAtLeast(s.entries, id);
    if (i < s.entries.length && compareId(s.entries[i], id) === 0) {
      s.entries.splice(i, 1);
      deleted++;
    }
  }
  return deleted;
}

export interface XreadPlan {
  count: number | null;
  block: number | null;
  keys: string[];
  ids: string[];
}

export function parseXread(args: (string | Buffer)[]): XreadPlan {
  let count: number | null = null;
  let block: number | null = null;
  let i = 0;
  for (;;) {
    const word = upper(args[i]);
    if (word === "COUNT") {
      count = Number(args[i + 1]);
      if (!Number.isInteger(count)) throw new Error("ERR value is not an integer or out of range");
      if (count <= 0) count = null;
      i += 2;
    } else if (word === "BLOCK") {
      block = Number(args[i + 1]);
      if (!Number.isInteger(block)) throw new Error("ERR timeout is not an integer or out of range");
      if (block < 0) throw new Error("ERR timeout is negative");
      i += 2;
    } else if (word === "STREAMS") {
      i++;
      break;
    } else {
      throw new Error("ERR syntax error");
    }
  }
  const rest = args.slice(i).map(String);
  if (rest.length === 0 || rest.length % 2 !== 0) {
    throw new Error(
      "ERR Unbalanced 'xread' list of streams: for each stream key an ID or '$' must be specified.",
    );
  }
  const half = rest.length / 2;
  return { count, block, keys: rest.slice(0, half), ids: rest.slice(half) };
}

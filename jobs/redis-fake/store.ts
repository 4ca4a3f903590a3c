/**
 * The key space of one in-memory Redis data space, replacing ioredis-mock's own store for
 * speed while keeping its interface.
 *
 * Contract:
 * - `get`, `set`, `has`, `delete`, `keys`, `clear` behave exactly like ioredis-mock's store
 *   (values are copied on the way in and out, expired keys vanish lazily, every write and
 *   delete emits "modified" with the key), so ioredis-mock's command emulators keep working
 *   unchanged on it.
 * - `peek` and `put` hand out and take the live value without copying, for the fake's own
 *   command implementations (sorted sets and lists, commands.ts): ioredis-mock copies a whole
 *   sorted set on every read and write, which made each ZADD to a queue's completed set
 *   O(size) and a queue with 10,000 kept jobs about 20 times slower than a real Redis.
 * - `sortedIndex(map)` keeps the members of a sorted set (ioredis-mock's
 *   Map<member, {score, value}>) ordered by (score, member bytes), as Redis orders them;
 *   it is rebuilt lazily whenever an ioredis-mock command replaced the Map.
 *
 * Not covered yet:
 * - ioredis-mock's `keyPrefix` option (BullMQ refuses it anyway) and active expiry (keys
 *   expire when touched, as in ioredis-mock).
 */
import type { EventEmitter } from "node:events";

export interface SharedExpires {
  get(key: string): number | undefined;
  set(key: string, timestamp: number): void;
  has(key: string): boolean;
  isExpired(key: string): boolean;
  delete(key: string): void;
  clear(): void;
}

export interface ZsetEntry {
  score: number;
  value: string;
}

/** Copies a value the way ioredis-mock's store does. */
function copy(value: unknown): unknown {
  if (Array.isArray(value)) return value.slice();
  if (Buffer.isBuffer(value)) return Buffer.from(value);
  if (value instanceof Set) return new Set(value);
  if (value instanceof Map) return new Map(value);
  if (typeof value === "object" && value !== null) return { ...value };
  return value;
}

export class KeySpace {
  private readonly raw = new Map<string, unknown>();
  private readonly indexes = new WeakMap<Map<string, ZsetEntry>, SortedIndex>();

  constructor(
    private readonly expires: SharedExpires,
    private readonly events: EventEmitter,
  ) {}

  private expireIfDue(key: string): void {
    if (this.expires.has(key) && this.expires.isExpired(key)) this.delete(key);
  }

  // ---- ioredis-mock's interface (copying)
  get(key: string): unknown {
    this.expireIfDue(key);
    return copy(this.raw.get(key));
  }
  set(key: string, value: unknown): void {
    this.raw.set(key, copy(value));
    this.events.emit("modified", key);
  }
  has(key: string): boolean {
    this.expireIfDue(key);
    return this.raw.has(key);
  }
  delete(key: string): void {
    if (this.expires.has(key)) this.expires.delete(key);
    this.raw.delete(key);
    this.events.emit("modified", key);
  }
  keys(): string[] {
    const out: string[] = [];
    for (const key of this.raw.keys()) {
      if (!(this.expires.has(key) && this.expires.isExpired(key))) out.push(key);
    }
    return out;
  }
  clear(): void {
    this.raw.clear();
  }
  withKeyPrefix(prefix: string): KeySpace {
    if (prefix) throw new Error("The in-memory Redis does not support ioredis keyPrefix (BullMQ refuses it too).");
    return this;
  }

  // ---- the fake's own commands (live values)
  peek(key: string): unknown {
    this.expireIfDue(key);
    return this.raw.get(key);
  }
  /** Stores `value` as the live value (no copy) and signals the write. */
  put(key: string, value: unknown): void {
    this.raw.set(key, value);
    this.events.emit("modified", key);
  }
  /** Signals a write made to a live value in place. */
  touched(key: string): void {
    this.events.emit("modified", key);
  }

  sortedIndex(map: Map<string, ZsetEntry>): SortedIndex {
    let index = this.indexes.get(map);
    if (!index) {
      index = new SortedIndex([...map.values()]);
      this.indexes.set(map, index);
    }
    return index;
  }
}

const byteCompare = (a: string, b: string) => Buffer.compare(Buffer.from(a), Buffer.from(b));

/** Compares members by their UTF-8 bytes, as Redis's memcmp does. */
export function compareMemberBytes(a: string, b: string): number {
  if (a === b) return 0;
  const n = Math.min(a.length, b.length);
  for (let i = 0; i < n; i++) {
    const ca = a.charCodeAt(i);
    const cb = b.charCodeAt(i);
    if (ca === cb) continue;
    // Below the surrogates, UTF-16 order and UTF-8 byte order agree.
    if (ca < 0xd800 && cb < 0xd800) return ca - cb;
    return byteCompare(a, b);
  }
  return a.length - b.length;
}

export function compareEntries(a: ZsetEntry, b: ZsetEntry): number {
  if (a.score !== b.score) return a.score < b.score ? -1 : 1;
  return compareMemberBytes(a.value, b.value);
}

/** The members of one sorted set in Redis order, kept in step with its Map. */
export class SortedIndex {
  readonly entries: ZsetEntry[];

  constructor(entries: ZsetEntry[]) {
    this.entries = entries.sort(compareEntries);
  }

  /** First position whose entry is >= `probe`. */
  lowerBound(probe: ZsetEntry): number {
    const list = this.entries;
    let lo = 0;
    let hi = list.length;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (compareEntries(list[mid], probe) < 0) lo = mid + 1;
      else hi = mid;
    }
    return lo;
  }

  /** First position whose score is > `score` (strict) or >= `score`. */
  scoreBound(score: number, strict: boolean): number {
    const list = this.entries;
    let lo = 0;
    let hi = list.length;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      const s = list[mid].score;
      if (strict ? s <= score : s < score) lo = mid + 1;
      else hi = mid;
    }
    return lo;
  }

  insert(entry: ZsetEntry): void {
    const list = this.entries;
    const last = list[list.length - 1];
    if (!last || compareEntries(last, entry) < 0) list.push(entry);
    else list.splice(this.lowerBound(entry), 0, entry);
  }

  remove(entry: ZsetEntry): void {
    const i = this.lowerBound(entry);
    const found = this.entries[i];
    if (found && found.score === entry.score && found.value === entry.value) this.entries.splice(i, 1);
  }

  rank(entry: ZsetEntry): number {
    return this.lowerBound(entry);
  }
}

/**
 * Shared set-up for the queue contract suite: the same tests run on the embedded in-memory
 * Redis (default) and on a real Redis when REDIS_URL is set
 * (`REDIS_URL=redis://127.0.0.1:6390 npx vitest run tests/integration/queue`).
 *
 * Every queue of a run lives under its own BullMQ prefix, so a shared real Redis is never
 * flushed: `dispose()` deletes exactly the keys of this run.
 */
import { afterAll, afterEach, beforeAll, expect } from "vitest";
import { FlowProducer, Queue, QueueEvents, Worker, type Processor, type QueueOptions, type WorkerOptions } from "bullmq";
import type { Redis } from "ioredis";
import { createRedisConnection, queueBackend, resetFakeRedis } from "../../../jobs/redis";

export const backend = queueBackend();

export class Harness {
  readonly prefix = `lissom-test-${process.pid}-${Date.now().toString(36)}-${Math.random().toString(36).slice(2, 6)}`;
  readonly connection: Redis = createRedisConnection();
  /** Errors emitted by workers, queues and event listeners, unless a test expects them. */
  readonly errors: Error[] = [];
  private closers: (() => Promise<unknown>)[] = [];
  private extraConnections: Redis[] = [];
  private counter = 0;

  /** A queue name unique within this run. */
  name(label: string): string {
    this.counter += 1;
    return `${label}-${this.counter}`;
  }

  queue(name: string, opts: Partial<QueueOptions> = {}): Queue {
    const q = new Queue(name, { connection: this.connection, prefix: this.prefix, ...opts });
    q.on("error", (err) => this.errors.push(err));
    this.closers.push(() => q.close());
    return q;
  }

  worker(name: string, processor: Processor, opts: Partial<WorkerOptions> = {}, collectErrors = true): Worker {
    const w = new Worker(name, processor, { connection: this.connection, prefix: this.prefix, ...opts });
    w.on("error", (err) => {
      if (collectErrors) this.errors.push(err);
    });
    this.closers.push(() => w.close(true));
    return w;
  }

  /** QueueEvents reading from the start of the stream, so no event of a new queue is missed. */
  async events(name: string): Promise<QueueEvents> {
    const e = new QueueEvents(name, { connection: this.connection, prefix: this.prefix, lastEventId: "0-0" });
    e.on("error", (err) => this.errors.push(err));
    this.closers.push(() => e.close());
    await e.waitUntilReady();
    return e;
  }

  flow(): FlowProducer {
    const f = new FlowProducer({ connection: this.connection, prefix: this.prefix });
    f.on("error", (err) => this.errors.push(err));
    this.closers.push(() => f.close());
    return f;
  }

  /** Another connection to the same server (or the same embedded data). */
  newConnection(): Redis {
    const c = createRedisConnection();
    this.extraConnections.push(c);
    return c;
  }

  async closeAll(): Promise<void> {
    const closers = this.closers.reverse();
    this.closers = [];
    for (const close of closers) await close();
  }

  async dispose(): Promise<void> {
    await this.closeAll();
    if (backend === "embedded") {
      resetFakeRedis();
    } else {
      let cursor = "0";
      do {
        const [next, keys] = await this.connection.scan(cursor, "MATCH", `${this.prefix}:*`, "COUNT", 1000);
        cursor = next;
        if (keys.length) await this.connection.del(...keys);
      } while (cursor !== "0");
    }
    for (const c of this.extraConnections) await c.quit();
    await this.connection.quit();
  }
}

/** Resolves when `check` returns true, polling every 20 ms; rejects after `timeoutMs`. */
export async function waitFor(check: () => boolean | Promise<boolean>, timeoutMs = 5000, what = "condition"): Promise<void> {
  const end = Date.now() + timeoutMs;
  for (;;) {
    if (await check()) return;
    if (Date.now() > end) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 20));
  }
}

/** A promise with its resolve function, for processors that wait on the test. */
export function deferred<T = void>(): { promise: Promise<T>; resolve: (v: T) => void } {
  let resolve!: (v: T) => void;
  const promise = new Promise<T>((r) => (resolve = r));
  return { promise, resolve };
}

/**
 * One harness for a test file: every test's queues and workers are closed after it, and any
 * worker error it raised fails that test.
 */
export function useHarness(): () => Harness {
  let h: Harness;
  beforeAll(() => {
    h = new Harness();
  });
  afterEach(async () => {
    await h.closeAll();
    const errors = h.errors.splice(0);
    expect(errors.map((e) => e.message)).toEqual([]);
  });
  afterAll(async () => {
    await h.dispose();
  });
  return () => h;
}

/**
 * Queue throughput: jobs per second through BullMQ with an empty processor, on the embedded
 * in-memory Redis and, when REDIS_URL is set, on that real Redis, printed as a ratio
 * (embedded / real). Run with `npm run bench queue` (add REDIS_URL=redis://... to compare).
 *
 * Workload: N jobs added with addBulk in batches of 500 (completed jobs are kept, which is the
 * hard case for an in-memory store: the completed set grows with every job), then one worker
 * with concurrency 8 and an empty processor drains them. A small warm-up run first compiles
 * the scripts and warms the JIT on each backend.
 */
import { Queue, Worker } from "bullmq";
import type { Redis } from "ioredis";
import { createRedisConnection } from "../../jobs/redis";
import { createFakeRedis } from "../../jobs/redis-fake";

const JOBS = 5000;
const WARM_UP_JOBS = 300;
const CONCURRENCY = 8;

interface Rates {
  add: number;
  process: number;
  endToEnd: number;
}

async function run(connection: Redis, jobs: number): Promise<Rates> {
  const prefix = `lissom-bench-${process.pid}-${Date.now().toString(36)}`;
  const name = "throughput";
  const queue = new Queue(name, { connection, prefix });
  const t0 = performance.now();
  for (let i = 0; i < jobs; i += 500) {
    const n = Math.min(500, jobs - i);
    await queue.addBulk(Array.from({ length: n }, (_, k) => ({ name: "noop", data: { i: i + k } })));
  }
  const tAdded = performance.now();
  let done = 0;
  let worker: Worker | undefined;
  await new Promise<void>((resolve, reject) => {
    worker = new Worker(name, async () => undefined, { connection, prefix, concurrency: CONCURRENCY });
    worker.on("error", reject);
    worker.on("completed", () => {
      done += 1;
      if (done === jobs) resolve();
    });
  });
  const tDone = performance.now();
  await worker?.close();
  await queue.obliterate({ force: true });
  await queue.close();
  return {
    add: jobs / ((tAdded - t0) / 1000),
    process: jobs / ((tDone - tAdded) / 1000),
    endToEnd: jobs / ((tDone - t0) / 1000),
  };
}

async function measure(label: string, connect: () => Redis): Promise<Rates> {
  const connection = connect();
  try {
    await run(connection, WARM_UP_JOBS);
    const rates = await run(connection, JOBS);
    const f = (n: number) => Math.round(n).toLocaleString("en-US").padStart(7);
    console.log(`${label.padEnd(30)} add ${f(rates.add)} jobs/s   process ${f(rates.process)} jobs/s   end to end ${f(rates.endToEnd)} jobs/s`);
    return rates;
  } finally {
    await connection.quit();
  }
}

export default async function queueBench(): Promise<void> {
  console.log(`BullMQ throughput, ${JOBS} jobs, empty processor, concurrency ${CONCURRENCY}, completed jobs kept`);
  const embedded = await measure("embedded (in-memory Redis)", () => createFakeRedis());
  const url = process.env.REDIS_URL;
  if (!url) {
    console.log("redis-server: skipped (set REDIS_URL=redis://host:port to compare against a real Redis)");
    return;
  }
  const real = await measure(`redis-server (${new URL(url).host})`, () => createRedisConnection({ url }));
  const r = (a: number, b: number) => (a / b).toFixed(2);
  console.log(
    `ratio embedded / redis-server: add ${r(embedded.add, real.add)}, process ${r(embedded.process, real.process)}, end to end ${r(embedded.endToEnd, real.endToEnd)}`,
  );
}

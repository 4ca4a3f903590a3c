/**
 * jobs/redis.ts: which backend a process uses, and how connections behave when the real Redis
 * goes away. The outage test starts its own redis-server (Debian package) on a free port and
 * stops it; it is skipped where no redis-server binary is installed.
 */
import { spawn, spawnSync, type ChildProcess } from "node:child_process";
import { createServer } from "node:net";
import { Queue } from "bullmq";
import { afterEach, describe, expect, it } from "vitest";
import { createQueueConnectionForWeb, createRedisConnection, isRedisReady, queueBackend } from "../../../jobs/redis";

const hasRedisServer = spawnSync("redis-server", ["--version"]).status === 0;

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = createServer();
    srv.listen(0, "127.0.0.1", () => {
      const { port } = srv.address() as { port: number };
      srv.close(() => resolve(port));
    });
    srv.on("error", reject);
  });
}

async function startRedis(port: number): Promise<ChildProcess> {
  const child = spawn("redis-server", ["--port", String(port), "--bind", "127.0.0.1", "--save", "", "--appendonly", "no"], { stdio: ["ignore", "pipe", "pipe"] });
  await new Promise<void>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error("redis-server did not start within 5 s")), 5000);
    child.stdout!.on("data", (chunk: Buffer) => {
      if (chunk.toString().includes("Ready to accept connections")) {
        clearTimeout(timer);
        resolve();
      }
    });
    child.on("exit", (code) => reject(new Error(`redis-server exited with ${code}`)));
  });
  return child;
}

describe("jobs/redis connections", () => {
  const saved = process.env.REDIS_URL;
  afterEach(() => {
    if (saved === undefined) delete process.env.REDIS_URL;
    else process.env.REDIS_URL = saved;
  });

  it("uses the embedded Redis unless REDIS_URL is set", async () => {
    delete process.env.REDIS_URL;
    expect(queueBackend()).toBe("embedded");
    const a = createRedisConnection();
    const b = createRedisConnection();
    await a.set("lissom-test:connection:shared", "seen");
    // Every embedded connection sees the same data.
    expect(await b.get("lissom-test:connection:shared")).toBe("seen");
    await a.del("lissom-test:connection:shared");
    expect(isRedisReady(a)).toBe(true);
    await a.quit();
    await b.quit();
    process.env.REDIS_URL = "redis://127.0.0.1:1";
    expect(queueBackend()).toBe("redis");
  });

  it("reports a web connection whose Redis was down from the start as not ready", async () => {
    const port = await freePort();
    const web = createQueueConnectionForWeb({ url: `redis://127.0.0.1:${port}` });
    web.on("error", () => undefined);
    await new Promise((resolve) => setTimeout(resolve, 100));
    expect(isRedisReady(web)).toBe(false);
    web.disconnect();
  });

  it("configures real connections for workers and for web requests", () => {
    const worker = createRedisConnection({ url: "redis://127.0.0.1:1" });
    const web = createQueueConnectionForWeb({ url: "redis://127.0.0.1:1" });
    worker.on("error", () => undefined);
    web.on("error", () => undefined);
    expect(worker.options.maxRetriesPerRequest).toBeNull();
    expect(web.options.enableOfflineQueue).toBe(false);
    worker.disconnect();
    web.disconnect();
  });

  it.skipIf(!hasRedisServer)("fails a web request fast while the real Redis is down", async () => {
    const port = await freePort();
    const server = await startRedis(port);
    const url = `redis://127.0.0.1:${port}`;
    const connection = createQueueConnectionForWeb({ url });
    connection.on("error", () => undefined);
    const queue = new Queue("web-submit", { connection, prefix: "lissom-test-web" });
    queue.on("error", () => undefined);
    try {
      const job = await queue.add("fit", { dataset: 1 });
      expect(job.id).toBeDefined();
      expect(isRedisReady(connection)).toBe(true);
      server.kill("SIGKILL");
      await new Promise((resolve) => server.once("exit", resolve));
      await new Promise((resolve) => setTimeout(resolve, 100));
      const started = Date.now();
      await expect(queue.add("fit", { dataset: 2 })).rejects.toThrow();
      // The route can answer 503 at once instead of waiting for Redis to come back.
      expect(Date.now() - started).toBeLessThan(1000);
      expect(isRedisReady(connection)).toBe(false);
    } finally {
      if (server.exitCode === null) server.kill("SIGKILL");
      await queue.close().catch(() => undefined);
      connection.disconnect();
    }
  });
});

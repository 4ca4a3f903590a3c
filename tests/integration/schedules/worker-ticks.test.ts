/**
 * Schedules keep submitting while no web process runs: a real `npm run worker` process (on a
 * real Redis) takes the ticks of the job schedulers and submits the schedule's jobs, then runs
 * them. Here the test process only records the schedule (as the web process would) and starts
 * no tick worker of its own. Needs REDIS_URL; skipped otherwise.
 */
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { closeApp, dropQueueKeys, privateEnv, realRedis, spawnWorkerProcess, stopProcess, type RunnerEnv } from "../runner/harness";

if (!realRedis) console.warn("tests/integration/schedules/worker-ticks.test.ts skipped: set REDIS_URL to a redis-server to run it");

describe.skipIf(!realRedis)("schedules with only worker processes running", () => {
  let env: RunnerEnv;
  let worker: ReturnType<typeof spawnWorkerProcess> | undefined;

  beforeAll(async () => {
    env = privateEnv("worker-ticks");
    const { migrateDatabase } = await import("../../../app/.server/db/client.server");
    await migrateDatabase();
  });

  afterAll(async () => {
    if (worker) await stopProcess(worker.child, "SIGTERM");
    const { stopSchedules } = await import("../../../app/.server/schedules.server");
    await stopSchedules();
    const { closeScheduleQueue } = await import("../../../jobs/schedules");
    await closeScheduleQueue();
    await closeApp();
    await dropQueueKeys(env.prefix);
  });

  it("a worker process submits and runs the schedule's job when its time comes", async () => {
    const { ingestFile } = await import("../../../app/.server/datasets.server");
    const dataset = await ingestFile("tick contours", join(process.cwd(), "samples", "brindlewick-contours.geojson"), null);
    const { createDefinition, parseDefinition } = await import("../../../app/.server/definitions.server");
    const parsed = parseDefinition({ name: "Every second", steps: [{ step: "fit", params: { tolerance: 5 } }] });
    if (!parsed.ok) throw new Error(parsed.message);
    const definition = await createDefinition(parsed.data, null);
    const { createSchedule } = await import("../../../app/.server/schedules.server");
    // Six fields: seconds first, so the test need not wait a minute.
    const created = await createSchedule({ definition: definition.id, dataset: dataset.dataset.id, cron: "*/2 * * * * *", timezone: "UTC" }, null);
    if (!created.ok) throw new Error(created.message);

    worker = spawnWorkerProcess({ ...env.env, REDIS_URL: process.env.REDIS_URL!, WORKER_CONCURRENCY: "1" });
    const { db, schema } = await import("../../../app/.server/db/client.server");
    const { eq } = await import("drizzle-orm");
    const deadline = Date.now() + 60_000;
    let done: { id: string; status: string } | undefined;
    while (Date.now() < deadline && !done) {
      const runs = await db().select({ id: schema.jobs.id, status: schema.jobs.status }).from(schema.jobs).where(eq(schema.jobs.scheduleId, created.schedule.id));
      done = runs.find((r) => r.status === "successful");
      await new Promise((r) => setTimeout(r, 200));
    }
    expect(done, `no scheduled job finished; worker output:\n${worker.output()}`).toBeDefined();
    const row = await db().query.schedules.findFirst({ where: eq(schema.schedules.id, created.schedule.id) });
    expect(row!.lastRunAt).not.toBeNull();
  }, 90_000);
});

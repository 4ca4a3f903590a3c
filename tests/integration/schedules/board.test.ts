import { beforeAll, describe, expect, it } from "vitest";
import { bootTestApp, call, request } from "../routes/harness";

// The board (overview): counts by status, throughput per hour, the oldest waiting job and the
// failures needing action, checked against job rows written straight into the database.

let cookies: Record<string, string>;
const HOUR = 3_600_000;
// The middle of an hour, so "an hour ago" and "two hours ago" fall in whole buckets.
const now = new Date(Math.floor(Date.now() / HOUR) * HOUR + HOUR / 2);
const ids: Record<string, string> = {};

beforeAll(async () => {
  ({ cookies } = await bootTestApp());
  const { db, schema } = await import("../../../app/.server/db/client.server");
  const { listDatasets } = await import("../../../app/.server/datasets.server");
  const version = (await listDatasets())[0]!.latest!;
  const at = (ms: number) => new Date(now.getTime() + ms);
  const job = (name: string, row: Partial<typeof schema.jobs.$inferInsert>) => {
    ids[name] = crypto.randomUUID();
    return {
      id: ids[name],
      processId: "fit",
      inputs: {},
      steps: [{ step: "fit", params: { tolerance: 5 } }],
      datasetVersionId: version.id,
      createdAt: at(-3 * HOUR),
      ...row,
    };
  };
  // Rows nobody queued: the worker never sees them, so they stay as written.
  await db()
    .insert(schema.jobs)
    .values([
      job("ok1", { status: "successful", finishedAt: at(-HOUR), featuresDone: 10 }),
      job("ok2", { status: "successful", finishedAt: at(-HOUR + 60_000), featuresDone: 20 }),
      job("ok3", { status: "successful", finishedAt: at(-2 * HOUR), featuresDone: 5 }),
      job("okNow", { status: "successful", finishedAt: at(-60_000), featuresDone: 7 }),
      job("okOld", { status: "successful", finishedAt: at(-30 * HOUR), featuresDone: 1000 }),
      job("failed1", { status: "failed", finishedAt: at(-HOUR), featuresDone: 3, message: "Storage folder is read-only." }),
      job("failed2", { status: "failed", finishedAt: at(-10 * 60_000), message: "Queue went away." }),
      job("waitOld", { status: "accepted", createdAt: at(-50 * 60_000) }),
      job("waitNew", { status: "accepted", createdAt: at(-5 * 60_000) }),
      job("running", { status: "running", startedAt: at(-2 * 60_000), featuresDone: 2, featuresTotal: 5, progress: 40 }),
      job("dismissed", { status: "dismissed", finishedAt: at(-HOUR) }),
    ]);
  // A chunk of a fanned-out job belongs to its parent and is not counted again.
  await db().insert(schema.jobs).values(job("chunk", { status: "failed", parentId: ids.ok1, chunkIndex: 0, finishedAt: at(-HOUR) }));
});

describe("the board", () => {
  it("counts jobs by status as the database holds them, without chunk jobs", async () => {
    const { boardCounts } = await import("../../../app/.server/overview.server");
    const { db } = await import("../../../app/.server/db/client.server");
    const { sql } = await import("drizzle-orm");
    const counts = await boardCounts();
    expect(counts).toEqual({ accepted: 2, running: 1, successful: 5, failed: 2, dismissed: 1 });
    // The same numbers by plain SQL over the table.
    const raw = await db().all<{ status: string; n: number }>(sql`select status, count(*) as n from jobs where parent_id is null group by status`);
    expect(Object.fromEntries(raw.map((r) => [r.status, r.n]))).toEqual(Object.fromEntries(Object.entries(counts).filter(([, n]) => n > 0)));
  });

  it("shows jobs and features finished per hour over the last hours", async () => {
    const { throughput } = await import("../../../app/.server/overview.server");
    const hours = await throughput(12, now);
    expect(hours).toHaveLength(13); // twelve whole hours and the current one
    const bucketStart = Math.floor(now.getTime() / HOUR) * HOUR;
    expect(hours.at(-1)!.start.getTime()).toBe(bucketStart);
    const byOffset = (k: number) => hours[hours.length - 1 - k]!;
    expect(byOffset(0)).toMatchObject({ successful: 1, failed: 1, features: 7 });
    expect(byOffset(1)).toMatchObject({ successful: 2, failed: 1, features: 30 }); // a failed job's features are not counted
    expect(byOffset(2)).toMatchObject({ successful: 1, failed: 0, features: 5 });
    // 30 hours ago is outside the window; dismissed jobs are not "finished work".
    expect(hours.reduce((a, h) => a + h.successful + h.failed, 0)).toBe(6);
  });

  it("names the oldest waiting job and the failures needing action; the page agrees", async () => {
    const { loader } = await import("../../../app/routes/overview");
    const res = await call(loader as never, { request: request("/overview", { cookie: cookies.operator }) });
    expect(res.status).toBe(200);
    const body = res.body as {
      counts: Record<string, number>;
      oldest: { id: string };
      failures: { id: string }[];
      running: { id: string }[];
      may: { retry: boolean };
    };
    expect(body.oldest.id).toBe(ids.waitOld);
    expect(body.failures.map((f) => f.id)).toEqual([ids.failed2, ids.failed1]); // newest failure first
    expect(body.running.map((r) => r.id)).toEqual([ids.running]);
    expect(body.may.retry).toBe(true);
    const engineer = await call(loader as never, { request: request("/overview", { cookie: cookies.engineer }) });
    expect((engineer.body as { may: { retry: boolean } }).may.retry).toBe(false);
  });

  it("lets an operator retry a failure from the board; it leaves the list", async () => {
    const { action, loader } = await import("../../../app/routes/overview");
    const refused = await call(action as never, { request: request("/overview", { method: "POST", body: new URLSearchParams({ intent: "retry", jobId: ids.failed1! }), cookie: cookies.engineer }) });
    expect(refused.status).toBe(403);
    const res = await call(action as never, { request: request("/overview", { method: "POST", body: new URLSearchParams({ intent: "retry", jobId: ids.failed1! }), cookie: cookies.operator }) });
    expect(res.status).toBe(302);
    expect(res.headers.get("Location")).toBe("/overview");
    const after = (await call(loader as never, { request: request("/overview", { cookie: cookies.operator }) })).body as { failures: { id: string }[]; counts: Record<string, number> };
    expect(after.failures.map((f) => f.id)).not.toContain(ids.failed1);
    const again = await call(action as never, { request: request("/overview", { method: "POST", body: new URLSearchParams({ intent: "retry", jobId: ids.okNow! }), cookie: cookies.operator }) });
    expect(again.status).toBe(409);
  });
});

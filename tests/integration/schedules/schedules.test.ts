import { join } from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { bootTestApp, call, request } from "../routes/harness";

// Schedules: a cron expression in a time zone that submits a definition against the latest
// version of a dataset (DESIGN.md, "Words"), through BullMQ job schedulers on the embedded queue.

let cookies: Record<string, string>;
let datasetId: string;
let definitionId: string;
const samples = join(process.cwd(), "samples");

beforeAll(async () => {
  ({ cookies } = await bootTestApp());
  const { ingestFile } = await import("../../../app/.server/datasets.server");
  datasetId = (await ingestFile("schedule contours", join(samples, "brindlewick-contours.geojson"), null)).dataset.id;
  const { createDefinition, parseDefinition } = await import("../../../app/.server/definitions.server");
  const parsed = parseDefinition({ name: "Nightly contours", steps: [{ step: "fit", params: { tolerance: 5 } }] });
  if (!parsed.ok) throw new Error(parsed.message);
  definitionId = (await createDefinition(parsed.data, null)).id;
});

const api = {
  list: () => import("../../../app/routes/api.schedules"),
  one: () => import("../../../app/routes/api.schedule"),
};

function json(path: string, method: string, body: unknown, cookie: string) {
  return request(path, { method, body: JSON.stringify(body), headers: { "Content-Type": "application/json" }, cookie });
}

type Problem = { detail: string; fields?: { field: string; message: string }[] };
type ScheduleDoc = { id: string; cron: string; timezone: string; paused: boolean; nextRunAt: string | null; upcoming?: string[]; runs?: { jobID: string; datasetVersion: number }[] };

async function post(body: unknown, cookie = cookies.engineer!) {
  const { action } = await api.list();
  return call(action as never, { request: json("/api/schedules", "POST", body, cookie) });
}

async function patch(id: string, body: unknown, cookie: string) {
  const { action } = await api.one();
  return call(action as never, { request: json(`/api/schedules/${id}`, "PATCH", body, cookie), params: { scheduleId: id } });
}

async function runsOf(scheduleId: string) {
  const { db, schema } = await import("../../../app/.server/db/client.server");
  const { asc, eq } = await import("drizzle-orm");
  return db()
    .select({ id: schema.jobs.id, status: schema.jobs.status, datasetVersionId: schema.jobs.datasetVersionId, definitionId: schema.jobs.definitionId, createdAt: schema.jobs.createdAt })
    .from(schema.jobs)
    .where(eq(schema.jobs.scheduleId, scheduleId))
    .orderBy(asc(schema.jobs.createdAt));
}

async function waitFor<T>(what: string, probe: () => Promise<T | undefined | false>, ms = 20_000): Promise<T> {
  const deadline = Date.now() + ms;
  while (Date.now() < deadline) {
    const v = await probe();
    if (v) return v;
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error(`timed out waiting for ${what}`);
}

const settled = (runs: { status: string }[]) => runs.every((r) => r.status !== "accepted" && r.status !== "running");

describe("refusals", () => {
  it("refuses a cron expression that is not one, with the reason", async () => {
    for (const [cron, pattern] of [
      ["61 * * * *", /^Cron: "61 \* \* \* \*" is not a valid expression \(.*61.*\)/],
      ["every night", /^Cron: "every night" has 2 fields; write 5/],
      ["", /^Cron: write an expression/],
      ["0 0 30 2 *", /^Cron: .*not a valid expression/],
    ] as const) {
      const res = await post({ definition: definitionId, dataset: datasetId, cron, timezone: "UTC" });
      expect(res.status).toBe(400);
      expect((res.body as Problem).detail).toMatch(pattern);
      expect((res.body as Problem).fields![0]!.field).toBe("cron");
    }
  });

  it("refuses a time zone that is not an IANA name", async () => {
    const res = await post({ definition: definitionId, dataset: datasetId, cron: "0 2 * * *", timezone: "Brindlewick/Market Square" });
    expect(res.status).toBe(400);
    expect((res.body as Problem).detail).toBe('Time zone: "Brindlewick/Market Square" is not a time zone name; use an IANA name such as UTC, Europe/London or America/Chicago.');
    expect((res.body as Problem).fields![0]!.field).toBe("timezone");
  });

  it("refuses unknown definitions and datasets, and stores nothing", async () => {
    const a = await post({ definition: "nope", dataset: datasetId, cron: "0 2 * * *" });
    expect(a.status).toBe(400);
    expect((a.body as Problem).detail).toMatch(/^Definition:/);
    const b = await post({ definition: definitionId, dataset: "nope", cron: "0 2 * * *" });
    expect(b.status).toBe(400);
    expect((b.body as Problem).detail).toMatch(/^Dataset:/);
    const { listSchedules } = await import("../../../app/.server/schedules.server");
    expect(await listSchedules()).toHaveLength(0);
  });
});

describe("next run times", () => {
  it("follow the schedule's time zone, across a daylight-saving change", async () => {
    const { nextRuns } = await import("../../../app/.server/schedules.server");
    // UK clocks went forward at 01:00 GMT on 30 March 2025 (gov.uk, "When do the clocks change?"):
    // 02:00 London time is 02:00Z in winter and 01:00Z in summer time.
    const r = nextRuns("0 2 * * *", "Europe/London", 3, new Date("2025-03-28T12:00:00Z"));
    expect(r.ok && r.times.map((t) => t.toISOString())).toEqual(["2025-03-29T02:00:00.000Z", "2025-03-30T01:00:00.000Z", "2025-03-31T01:00:00.000Z"]);
    // America/Chicago is UTC−6 in January (CST), common practice.
    const c = nextRuns("30 6 * * 1-5", "America/Chicago", 2, new Date("2025-01-03T00:00:00Z"));
    expect(c.ok && c.times.map((t) => t.toISOString())).toEqual(["2025-01-03T12:30:00.000Z", "2025-01-06T12:30:00.000Z"]);
  });

  it("shows on the schedule page and in the API, and not while paused", async () => {
    const created = await post({ definition: definitionId, dataset: datasetId, cron: "0 2 * * *", timezone: "Europe/London" });
    expect(created.status).toBe(201);
    const doc = created.body as ScheduleDoc;
    const { nextRuns } = await import("../../../app/.server/schedules.server");
    const expected = nextRuns("0 2 * * *", "Europe/London");
    expect(doc.nextRunAt).toBe(expected.ok && expected.times[0]!.toISOString());
    expect(doc.upcoming).toHaveLength(5);

    const { loader } = await import("../../../app/routes/schedules.detail");
    const page = await call(loader as never, { request: request(`/schedules/${doc.id}`, { cookie: cookies.operator }), params: { scheduleId: doc.id } });
    expect(page.status).toBe(200);
    expect((page.body as { schedule: { nextRunAt: Date } }).schedule.nextRunAt.toISOString()).toBe(doc.nextRunAt);

    const paused = await patch(doc.id, { paused: true }, cookies.operator!);
    expect(paused.status).toBe(200);
    expect((paused.body as ScheduleDoc).nextRunAt).toBeNull();
    const { action: del } = await api.one();
    const gone = await call(del as never, { request: request(`/api/schedules/${doc.id}`, { method: "DELETE", cookie: cookies.engineer }), params: { scheduleId: doc.id } });
    expect(gone.status).toBe(204);
  });
});

describe("who may change a schedule", () => {
  it("operators pause and resume; engineers edit; consumers see nothing", async () => {
    const doc = (await post({ definition: definitionId, dataset: datasetId, cron: "0 3 * * *", paused: true })).body as ScheduleDoc;
    expect((await patch(doc.id, { cron: "0 4 * * *" }, cookies.operator!)).status).toBe(403);
    expect((await patch(doc.id, { paused: false, cron: "0 4 * * *" }, cookies.operator!)).status).toBe(403);
    expect((await patch(doc.id, { paused: true }, cookies.consumer!)).status).toBe(403);
    const resumed = await patch(doc.id, { paused: false }, cookies.operator!);
    expect((resumed.body as ScheduleDoc).paused).toBe(false);
    const edited = await patch(doc.id, { cron: "15 4 * * *", timezone: "Asia/Tokyo" }, cookies.engineer!);
    expect(edited.status).toBe(200);
    expect(edited.body).toMatchObject({ cron: "15 4 * * *", timezone: "Asia/Tokyo", paused: false });
    const bad = await patch(doc.id, { cron: "15 4 * *" }, cookies.engineer!);
    expect(bad.status).toBe(400);
    expect((bad.body as Problem).detail).toMatch(/^Cron: "15 4 \* \*" has 4 fields/);
    const unknown = await patch(doc.id, { every: 1000 }, cookies.engineer!);
    expect(unknown.status).toBe(400);
    expect((unknown.body as Problem).detail).toContain("Unknown field every");
    // The queue holds a job scheduler exactly for the schedules that are not paused.
    const { scheduleQueue } = await import("../../../jobs/schedules");
    const scheduler = await scheduleQueue().getJobScheduler(doc.id);
    expect(scheduler).toMatchObject({ pattern: "15 4 * * *", tz: "Asia/Tokyo" });
    await patch(doc.id, { paused: true }, cookies.operator!);
    expect(await scheduleQueue().getJobScheduler(doc.id)).toBeFalsy();
    const { action: del } = await api.one();
    await call(del as never, { request: request(`/api/schedules/${doc.id}`, { method: "DELETE", cookie: cookies.engineer }), params: { scheduleId: doc.id } });
  });
});

describe("firing", () => {
  it("fires every second, takes the latest dataset version each time, stops when paused and restarts when resumed", async () => {
    const { getDataset, ingestFile } = await import("../../../app/.server/datasets.server");
    const created = await post({ definition: definitionId, dataset: datasetId, cron: "* * * * * *", timezone: "UTC" });
    expect(created.status).toBe(201);
    const id = (created.body as ScheduleDoc).id;
    const v1 = (await getDataset(datasetId))!.versions[0]!;

    const first = await waitFor("the first run", async () => (await runsOf(id))[0]);
    expect(first.datasetVersionId).toBe(v1.id);
    expect(first.definitionId).toBe(definitionId);

    // A new upload under the same name is version 2; the next run must take it.
    const v2 = (await ingestFile("schedule contours", join(samples, "brindlewick-lake.geojson"), null)).version;
    expect(v2.version).toBe(v1.version + 1);
    const later = await waitFor("a run on version 2", async () => (await runsOf(id)).find((r) => r.datasetVersionId === v2.id));
    const runs = await runsOf(id);
    expect(runs.length).toBeGreaterThanOrEqual(2);
    // Runs before the upload used v1, runs after it v2; never an older version after a newer one.
    const versions = runs.map((r) => (r.datasetVersionId === v1.id ? 1 : 2));
    expect(versions).toEqual([...versions].sort());
    expect(later.createdAt.getTime()).toBeGreaterThanOrEqual(first.createdAt.getTime());

    // The API lists the last runs with their dataset versions.
    const { loader } = await api.one();
    const doc = (await call(loader as never, { request: request(`/api/schedules/${id}`, { cookie: cookies.operator }), params: { scheduleId: id } })).body as ScheduleDoc;
    expect(doc.runs!.map((r) => r.jobID).sort()).toEqual(runs.map((r) => r.id).sort());
    expect(doc.runs![0]!.datasetVersion).toBe(2);

    // Pause from the console, as an operator.
    const { action: listAction } = await import("../../../app/routes/schedules");
    const pause = await call(listAction as never, { request: request("/schedules", { method: "POST", body: new URLSearchParams({ intent: "pause", scheduleId: id }), cookie: cookies.operator }) });
    expect(pause.status).toBe(302);
    await waitFor("open runs to finish", async () => settled(await runsOf(id)), 30_000);
    const before = (await runsOf(id)).length;
    await new Promise((r) => setTimeout(r, 2500));
    expect((await runsOf(id)).length).toBe(before);

    const resume = await call(listAction as never, { request: request("/schedules", { method: "POST", body: new URLSearchParams({ intent: "resume", scheduleId: id }), cookie: cookies.operator }) });
    expect(resume.status).toBe(302);
    await waitFor("a run after resuming", async () => (await runsOf(id)).length > before);
    await patch(id, { paused: true }, cookies.operator!);
    await waitFor("open runs to finish", async () => settled(await runsOf(id)), 30_000);
    const final = await runsOf(id);
    expect(final.every((r) => r.status === "successful")).toBe(true);
    const { getScheduleRow } = await import("../../../app/.server/schedules.server");
    expect((await getScheduleRow(id))!.lastRunAt).not.toBeNull();
  });

  it("a tick for a paused or deleted schedule submits nothing", async () => {
    const { runScheduleTick } = await import("../../../app/.server/schedules.server");
    const doc = (await post({ definition: definitionId, dataset: datasetId, cron: "0 5 * * *", paused: true })).body as ScheduleDoc;
    expect(await runScheduleTick(doc.id, new Date())).toEqual({ skipped: "the schedule is paused" });
    expect(await runsOf(doc.id)).toHaveLength(0);
    expect(await runScheduleTick("00000000-0000-4000-8000-000000000000", new Date())).toEqual({ skipped: "the schedule no longer exists" });
  });
});

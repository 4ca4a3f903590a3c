import { readFileSync } from "node:fs";
import { join } from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { bootTestApp, call, request } from "../routes/harness";

// Definitions: named, versioned lists of steps (DESIGN.md, "Words"). Saving a change makes a
// new row; every job records the exact version it ran.

let cookies: Record<string, string>;
let roadsId: string;
const samples = join(process.cwd(), "samples");

beforeAll(async () => {
  ({ cookies } = await bootTestApp());
  const { ingestFile } = await import("../../../app/.server/datasets.server");
  roadsId = (await ingestFile("definition roads", join(samples, "brindlewick-roads.geojson"), null)).dataset.id;
});

const api = {
  list: () => import("../../../app/routes/api.definitions"),
  one: () => import("../../../app/routes/api.definition"),
  run: () => import("../../../app/routes/api.definition-execution"),
  preview: () => import("../../../app/routes/api.definitions-preview"),
  job: () => import("../../../app/routes/api.job"),
  results: () => import("../../../app/routes/api.job-results"),
};

function json(path: string, method: string, body: unknown, cookie: string) {
  return request(path, { method, body: JSON.stringify(body), headers: { "Content-Type": "application/json" }, cookie });
}

type Doc = { id: string; name: string; version: number; steps: { step: string; params: Record<string, number> }[]; formats: string[]; maxAttempts: number; versions?: { id: string; version: number }[] };
type Problem = { status: number; detail: string; fields?: { field: string; message: string }[] };

async function create(body: unknown, cookie = cookies.engineer!) {
  const { action } = await api.list();
  return call(action as never, { request: json("/api/definitions", "POST", body, cookie) });
}

async function waitForJob(jobId: string, until: (s: string) => boolean = (s) => s === "successful" || s === "failed", ms = 60_000) {
  const { loader } = await api.job();
  const deadline = Date.now() + ms;
  let status = "";
  while (Date.now() < deadline) {
    status = ((await call(loader as never, { request: request(`/api/jobs/${jobId}`, { cookie: cookies.operator }), params: { jobId } })).body as { status: string }).status;
    if (until(status)) return status;
    await new Promise((r) => setTimeout(r, 150));
  }
  return status;
}

describe("versions", () => {
  it("creates version 1, saves changes as version 2 and leaves version 1 as it was", async () => {
    const first = await create({ name: "Roads smooth", steps: [{ step: "fit", params: { tolerance: 4 } }] });
    expect(first.status).toBe(201);
    const v1 = first.body as Doc;
    expect(v1.version).toBe(1);
    expect(first.headers.get("Location")).toBe(`/api/definitions/${v1.id}`);
    // Defaults of the schema: GeoJSON output, 3 attempts.
    expect(v1.formats).toEqual(["geojson"]);
    expect(v1.maxAttempts).toBe(3);

    const { action: put, loader: get } = await api.one();
    const second = await call(put as never, {
      request: json(`/api/definitions/${v1.id}`, "PUT", { steps: [{ step: "fit", params: { tolerance: 2, cornerAngle: 45 } }, { step: "discretise", params: { tolerance: 0.5 } }], formats: ["geojson", "csv"] }, cookies.engineer!),
      params: { definitionId: v1.id },
    });
    expect(second.status).toBe(201);
    const v2 = second.body as Doc;
    expect(v2.name).toBe("Roads smooth");
    expect(v2.version).toBe(2);
    expect(v2.id).not.toBe(v1.id);

    const again = await call(get as never, { request: request(`/api/definitions/${v1.id}`, { cookie: cookies.operator }), params: { definitionId: v1.id } });
    expect(again.status).toBe(200);
    const stored = again.body as Doc;
    expect(stored.steps).toEqual([{ step: "fit", params: { tolerance: 4 } }]);
    expect(stored.versions!.map((v) => v.version)).toEqual([2, 1]);

    // Editing from an older version still makes the next number, never overwrites.
    const third = await call(put as never, { request: json(`/api/definitions/${v1.id}`, "PUT", { steps: [{ step: "fit", params: { tolerance: 3 } }] }, cookies.admin!), params: { definitionId: v1.id } });
    expect((third.body as Doc).version).toBe(3);

    const { loader: list } = await api.list();
    const all = (await call(list as never, { request: request("/api/definitions", { cookie: cookies.operator }) })).body as { definitions: (Doc & { versionCount: number })[] };
    const mine = all.definitions.filter((d) => d.name === "Roads smooth");
    expect(mine).toHaveLength(1);
    expect(mine[0]!.version).toBe(3);
    expect(mine[0]!.versionCount).toBe(3);
  });

  it("refuses a second definition under a name in use, and a rename through a new version", async () => {
    await create({ name: "Kept name", steps: [{ step: "fit", params: { tolerance: 1 } }] });
    const dup = await create({ name: "Kept name", steps: [{ step: "fit", params: { tolerance: 9 } }] });
    expect(dup.status).toBe(409);
    expect((dup.body as Problem).detail).toContain("Kept name");

    const { listDefinitions } = await import("../../../app/.server/definitions.server");
    const row = (await listDefinitions()).find((d) => d.name === "Kept name")!;
    const { action: put } = await api.one();
    const renamed = await call(put as never, { request: json(`/api/definitions/${row.id}`, "PUT", { name: "Other name", steps: [{ step: "fit", params: { tolerance: 1 } }] }, cookies.engineer!), params: { definitionId: row.id } });
    expect(renamed.status).toBe(409);
    expect((renamed.body as Problem).detail).toMatch(/keeps its name/);
  });
});

describe("validation names the step and the field", () => {
  it("answers 400 with one sentence per problem", async () => {
    const res = await create({
      name: "Broken",
      steps: [
        { step: "fit", params: { tolerance: -1 } },
        { step: "discretise", params: {} },
        { step: "clean", params: {} },
        { step: "elevate", params: { degree: 2.5 } },
        { step: "fit", params: { tolerence: 3 } },
      ],
      formats: ["dwg"],
      maxAttempts: 0,
    });
    expect(res.status).toBe(400);
    const messages = (res.body as Problem).fields!.map((f) => f.message);
    expect(messages).toContain("Step 1 (fit), tolerance: must be a positive number of metres");
    expect(messages).toContain("Step 2 (discretise), tolerance: must be a number of metres");
    expect(messages).toContain('Step 3: "clean" is not a step; choose one of fit, elevate, discretise');
    expect(messages).toContain("Step 4 (elevate), degree: must be a whole number");
    expect(messages.some((m) => m.startsWith("Step 5 (fit)") && m.includes("unknown parameter tolerence"))).toBe(true);
    expect(messages.some((m) => m.startsWith("Output formats:") && m.includes("geojson"))).toBe(true);
    expect(messages).toContain("Attempts: must be at least 1");
    const fields = (res.body as Problem).fields!.map((f) => f.field);
    expect(fields).toContain("steps.0.params.tolerance");
    const { listDefinitions } = await import("../../../app/.server/definitions.server");
    expect((await listDefinitions()).some((d) => d.name === "Broken")).toBe(false);
  });

  it("refuses an empty step list and a name that is not a name", async () => {
    const res = await create({ name: "  ", steps: [] });
    expect(res.status).toBe(400);
    const detail = (res.body as Problem).detail;
    expect(detail).toContain("Name: must start with a letter or digit");
    expect(detail).toContain("Steps: name at least one step");
  });

  it("the console's form gives the same sentences, and keeps nothing", async () => {
    const { action } = await import("../../../app/routes/definitions.new");
    const body = new URLSearchParams([
      ["intent", "save"],
      ["name", "Form broken"],
      ["steps.0.step", "fit"],
      ["steps.0.tolerance", "five"],
      ["steps.1.step", "discretise"],
      ["steps.1.tolerance", "0"],
      ["formats", "geojson"],
    ]);
    const res = await call(action as never, { request: request("/definitions/new", { method: "POST", body, cookie: cookies.engineer }) });
    expect(res.status).toBe(400);
    const messages = (res.body as { issues: { message: string }[] }).issues.map((i) => i.message);
    expect(messages).toContain("Step 1 (fit), tolerance: must be a number of metres");
    expect(messages).toContain("Step 2 (discretise), tolerance: must be a positive number of metres");
  });

  it("the console's form saves a definition with retry settings in seconds", async () => {
    const { action } = await import("../../../app/routes/definitions.new");
    const body = new URLSearchParams([
      ["intent", "save"],
      ["name", "Form roads"],
      ["description", "Made in the editor"],
      ["steps.0.step", "fit"],
      ["steps.0.tolerance", "3"],
      ["steps.0.cornerAngle", ""],
      ["steps.1.step", "elevate"],
      ["steps.1.degree", "5"],
      ["formats", "geojson"],
      ["formats", "gml"],
      ["maxAttempts", "4"],
      ["backoffSeconds", "1.5"],
    ]);
    const res = await call(action as never, { request: request("/definitions/new", { method: "POST", body, cookie: cookies.engineer }) });
    expect(res.status).toBe(302);
    const id = res.headers.get("Location")!.split("/").pop()!;
    const { getDefinition } = await import("../../../app/.server/definitions.server");
    const def = (await getDefinition(id))!;
    expect(def.steps).toEqual([{ step: "fit", params: { tolerance: 3 } }, { step: "elevate", params: { degree: 5 } }]);
    expect(def.formats).toEqual(["geojson", "gml"]);
    expect(def.maxAttempts).toBe(4);
    expect(def.backoffMs).toBe(1500);
    expect(def.description).toBe("Made in the editor");
  });
});

describe("jobs run from a definition", () => {
  it("record the exact version they ran, its steps and its formats", async () => {
    const v1 = (await create({ name: "Run me", steps: [{ step: "fit", params: { tolerance: 6 } }], formats: ["geojson", "csv"], maxAttempts: 2 })).body as Doc;
    const { action: put } = await api.one();
    const v2 = (await call(put as never, { request: json(`/api/definitions/${v1.id}`, "PUT", { steps: [{ step: "fit", params: { tolerance: 2 } }] }, cookies.engineer!), params: { definitionId: v1.id } })).body as Doc;

    const { action: run } = await api.run();
    const first = await call(run as never, { request: json(`/api/definitions/${v1.id}/execution`, "POST", { dataset: roadsId, priority: 3 }, cookies.engineer!), params: { definitionId: v1.id } });
    expect(first.status).toBe(201);
    const jobId = (first.body as { jobID: string }).jobID;
    expect(first.headers.get("Location")).toBe(`/api/jobs/${jobId}`);
    const second = await call(run as never, { request: json(`/api/definitions/${v2.id}/execution`, "POST", { dataset: roadsId, maxAttempts: 5 }, cookies.admin!), params: { definitionId: v2.id } });
    expect(second.status).toBe(201);

    const { getJob } = await import("../../../app/.server/jobs.server");
    const job1 = (await getJob(jobId))!;
    expect(job1.definitionId).toBe(v1.id);
    expect(job1.steps).toEqual([{ step: "fit", params: { tolerance: 6 } }]);
    expect(job1.priority).toBe(3);
    expect(job1.maxAttempts).toBe(2); // the definition's default
    const job2 = (await getJob((second.body as { jobID: string }).jobID))!;
    expect(job2.definitionId).toBe(v2.id);
    expect(job2.maxAttempts).toBe(5); // given with the submission
    expect(job2.steps).toEqual([{ step: "fit", params: { tolerance: 2 } }]);

    expect(await waitForJob(jobId)).toBe("successful");
    const { loader: results } = await api.results();
    const files = ((await call(results as never, { request: request(`/api/jobs/${jobId}/results`, { cookie: cookies.engineer }), params: { jobId } })).body as { files: { format: string }[] }).files;
    expect(files.map((f) => f.format).sort()).toEqual(["csv", "geojson"]);
  });

  it("refuses an unknown dataset, a missing dataset version and a consumer", async () => {
    const def = (await create({ name: "Run refusals", steps: [{ step: "fit", params: { tolerance: 6 } }] })).body as Doc;
    const { action: run } = await api.run();
    const noDataset = await call(run as never, { request: json(`/api/definitions/${def.id}/execution`, "POST", { dataset: "nope" }, cookies.engineer!), params: { definitionId: def.id } });
    expect(noDataset.status).toBe(400);
    expect((noDataset.body as Problem).detail).toMatch(/^dataset:/);
    const noVersion = await call(run as never, { request: json(`/api/definitions/${def.id}/execution`, "POST", { dataset: roadsId, datasetVersion: 99 }, cookies.engineer!), params: { definitionId: def.id } });
    expect(noVersion.status).toBe(400);
    expect((noVersion.body as Problem).detail).toContain("no version 99");
    const consumer = await call(run as never, { request: json(`/api/definitions/${def.id}/execution`, "POST", { dataset: roadsId }, cookies.consumer!), params: { definitionId: def.id } });
    expect(consumer.status).toBe(403);
  });

  it("the console's run form submits the version shown and opens the job", async () => {
    const def = (await create({ name: "Console run", steps: [{ step: "fit", params: { tolerance: 6 } }] })).body as Doc;
    const { action } = await import("../../../app/routes/definitions.detail");
    const body = new URLSearchParams({ dataset: roadsId, priority: "0", maxAttempts: "1" });
    const res = await call(action as never, { request: request(`/definitions/${def.id}`, { method: "POST", body, cookie: cookies.engineer }), params: { definitionId: def.id } });
    expect(res.status).toBe(302);
    const jobId = res.headers.get("Location")!.split("/").pop()!;
    const { getJob } = await import("../../../app/.server/jobs.server");
    expect((await getJob(jobId))!.definitionId).toBe(def.id);
  });
});

describe("preview on one feature", () => {
  it("gives the figures of a direct call of the step runners on that feature", async () => {
    const steps = [
      { step: "fit", params: { tolerance: 3 } },
      { step: "elevate", params: { degree: 4 } },
    ];
    const { action } = await api.preview();
    const res = await call(action as never, { request: json("/api/definitions/preview", "POST", { steps, dataset: roadsId, feature: 2 }, cookies.engineer!) });
    expect(res.status).toBe(200);
    const preview = res.body as {
      featureIndex: number;
      report: { verticesIn: number; segmentsOut: number; maxDeviation: number; rmsDeviation: number; status: string };
      steps: { step: string; report: { verticesIn: number; segmentsOut: number; maxDeviation: number } }[];
      input: number[][][];
      result: number[][][];
      controlPoints: number[][][];
    };
    expect(preview.featureIndex).toBe(2);

    // The same feature straight from the sample file (JSON.parse, not our reader) through the step runners.
    const { runFeatureStep } = await import("../../../jobs/steps");
    const raw = JSON.parse(readFileSync(join(samples, "brindlewick-roads.geojson"), "utf8")) as { features: object[] };
    const fitted = runFeatureStep("fit", { tolerance: 3 }, raw.features[2], 2, { code: "EPSG:4326" });
    const elevated = runFeatureStep("elevate", { degree: 4 }, fitted.feature, 2, { code: "EPSG:4326" });
    expect(preview.steps.map((s) => s.step)).toEqual(["fit", "elevate"]);
    expect(preview.steps[0]!.report).toEqual(JSON.parse(JSON.stringify(fitted.report)));
    expect(preview.steps[1]!.report).toEqual(JSON.parse(JSON.stringify(elevated.report)));
    // A job reports fit's figures for a feature when the definition fits (jobs/run-job.ts).
    expect(preview.report).toEqual(preview.steps[0]!.report);
    // Vertices in = positions of the feature as published in the file.
    const coords = (raw.features[2] as { geometry: { coordinates: number[][] } }).geometry.coordinates;
    expect(preview.report.verticesIn).toBe(coords.length);
    expect(preview.report.maxDeviation).toBeLessThanOrEqual(3);
    // The picture: the input line as read, every curve of degree 4 (5 control points).
    expect(preview.input[0]).toEqual(coords.map((p) => [p[0], p[1]]));
    expect(preview.controlPoints.length).toBe(preview.report.segmentsOut);
    for (const seg of preview.controlPoints) expect(seg).toHaveLength(5);
  });

  it("the console's Preview button answers from the form as it stands, without saving", async () => {
    const { action } = await import("../../../app/routes/definitions.new");
    const body = new URLSearchParams([
      ["intent", "preview"],
      ["name", ""],
      ["steps.0.step", "fit"],
      ["steps.0.tolerance", "5"],
      ["steps.1.step", "discretise"],
      ["steps.1.tolerance", "0.5"],
      ["previewDataset", roadsId],
      ["previewFeature", "0"],
    ]);
    const res = await call(action as never, { request: request("/definitions/new", { method: "POST", body, cookie: cookies.engineer }) });
    expect(res.status).toBe(200);
    const out = res.body as { preview: { steps: { step: string }[]; report: { segmentsOut: number } } };
    expect(out.preview.steps.map((s) => s.step)).toEqual(["fit", "discretise"]);
    expect(out.preview.report.segmentsOut).toBeGreaterThan(0);

    const past = new URLSearchParams([["intent", "preview"], ["steps.0.step", "fit"], ["steps.0.tolerance", "5"], ["previewDataset", roadsId], ["previewFeature", "99"]]);
    const tooFar = await call(action as never, { request: request("/definitions/new", { method: "POST", body: past, cookie: cookies.engineer }) });
    expect((tooFar.body as { previewError: string }).previewError).toMatch(/has 5 usable features.*99 is past the end/);

    const badSteps = new URLSearchParams([["intent", "preview"], ["steps.0.step", "fit"], ["previewDataset", roadsId]]);
    const refused = await call(action as never, { request: request("/definitions/new", { method: "POST", body: badSteps, cookie: cookies.engineer }) });
    expect((refused.body as { previewError: string }).previewError).toContain("Step 1 (fit), tolerance");
  });
});

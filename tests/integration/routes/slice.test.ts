import { readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { bootTestApp, call, request } from "./harness";

let cookies: Record<string, string>;
beforeAll(async () => {
  ({ cookies } = await bootTestApp());
});

const api = {
  datasets: () => import("../../../app/routes/api.datasets"),
  execution: () => import("../../../app/routes/api.process-execution"),
  job: () => import("../../../app/routes/api.job"),
  results: () => import("../../../app/routes/api.job-results"),
  download: () => import("../../../app/routes/output-download"),
};

function upload(name: string, content: string | Uint8Array, cookie: string, datasetName?: string) {
  const body = new FormData();
  body.set("file", new Blob([content as BlobPart]), name);
  if (datasetName) body.set("name", datasetName);
  return request("/api/datasets", { method: "POST", body, cookie });
}

function execute(inputs: unknown, cookie: string) {
  return request("/api/processes/fit/execution", { method: "POST", body: JSON.stringify({ inputs }), headers: { "Content-Type": "application/json" }, cookie });
}

async function datasetCount(): Promise<number> {
  const { listDatasets } = await import("../../../app/.server/datasets.server");
  return (await listDatasets()).length;
}

const river = (() => {
  const dir = join(process.cwd(), "samples");
  const file = readdirSync(dir).find((f) => f.endsWith("-river.geojson"));
  if (!file) throw new Error("samples/*-river.geojson is missing; run `npm run samples`");
  return { name: file, text: readFileSync(join(dir, file), "utf8") };
})();

describe("the slice through the API: upload, fit, status, results, download", () => {
  it("runs a fit job to success and serves its GeoJSON with curves", async () => {
    const { action: uploadAction } = await api.datasets();
    const up = await call(uploadAction as never, { request: upload(river.name, river.text, cookies.engineer!, "api river") });
    expect(up.status).toBe(201);
    const doc = up.body as { id: string; name: string; versions: { version: number }[] };
    expect(Object.keys(doc)[0]).toBe("id"); // issue contract: the dataset document has `id` first
    expect(doc.name).toBe("api river");

    const { action: executeAction } = await api.execution();
    const created = await call(executeAction as never, { request: execute({ dataset: doc.id, tolerance: 5 }, cookies.engineer!), params: { processId: "fit" } });
    expect(created.status).toBe(201);
    const status = created.body as { jobID: string; status: string };
    // OGC API - Processes Part 1 (OGC 18-062r2), asynchronous execution: 201 + Location of the job.
    expect(created.headers.get("Location")).toBe(`/api/jobs/${status.jobID}`);
    expect(status.status).toBe("accepted");

    const { loader: jobLoader } = await api.job();
    let last: { status: string; progress: number } = { status: "accepted", progress: 0 };
    const deadline = Date.now() + 60_000;
    while (Date.now() < deadline) {
      const res = await call(jobLoader as never, { request: request(`/api/jobs/${status.jobID}`, { cookie: cookies.operator }), params: { jobId: status.jobID } });
      last = res.body as typeof last;
      expect(["accepted", "running", "successful"]).toContain(last.status);
      if (last.status === "successful") break;
      await new Promise((r) => setTimeout(r, 200));
    }
    expect(last.status).toBe("successful");
    expect(last.progress).toBe(100);

    const { loader: resultsLoader } = await api.results();
    const results = await call(resultsLoader as never, { request: request(`/api/jobs/${status.jobID}/results`, { cookie: cookies.engineer }), params: { jobId: status.jobID } });
    expect(results.status).toBe(200);
    const href = (results.body as { result: { href: string } }).result.href;
    const outputId = href.split("/")[2]!;

    const { loader: downloadLoader } = await api.download();
    const file = await call(downloadLoader as never, { request: request(href, { cookie: cookies.engineer }), params: { outputId } });
    expect(file.status).toBe(200);
    const out = file.body as { type: string; features: { curves: number[][][][]; geometry: { type: string } }[] };
    const input = JSON.parse(river.text) as { features: { geometry: { type: string } }[] };
    // DESIGN.md: one Feature per input Feature, same order, same geometry type, plus `curves`.
    expect(out.type).toBe("FeatureCollection");
    expect(out.features).toHaveLength(input.features.length);
    out.features.forEach((f, i) => {
      expect(f.geometry.type).toBe(input.features[i]!.geometry.type);
      expect(f.curves.length).toBeGreaterThan(0);
      for (const part of f.curves) for (const seg of part) expect(seg).toHaveLength(4);
    });

    // Not published yet: a consumer cannot download it.
    const hidden = await call(downloadLoader as never, { request: request(href, { cookie: cookies.consumer }), params: { outputId } });
    expect(hidden.status).toBe(404);
    const { publishOutput } = await import("../../../app/.server/outputs.server");
    const { db, schema } = await import("../../../app/.server/db/client.server");
    const { eq } = await import("drizzle-orm");
    const engineer = await db().query.user.findFirst({ where: eq(schema.user.email, "engineer@example.com") });
    await publishOutput(outputId, engineer!.id, true);
    const shown = await call(downloadLoader as never, { request: request(href, { cookie: cookies.consumer }), params: { outputId } });
    expect(shown.status).toBe(200);
  });
});

describe("output formats", () => {
  it("writes every requested format from one run of the steps", async () => {
    const { listDatasets } = await import("../../../app/.server/datasets.server");
    const dataset = (await listDatasets()).find((d) => d.name === "api river") ?? (await listDatasets())[0]!;
    const { action: executeAction } = await api.execution();
    const formats = ["geojson", "ndjson", "shapefile", "gml", "svg", "csv"];
    const created = await call(executeAction as never, { request: execute({ dataset: dataset.id, tolerance: 8, formats }, cookies.engineer!), params: { processId: "fit" } });
    expect(created.status).toBe(201);
    const jobId = (created.body as { jobID: string }).jobID;
    const { loader: jobLoader } = await api.job();
    const deadline = Date.now() + 60_000;
    let status = "accepted";
    while (Date.now() < deadline && status !== "successful" && status !== "failed") {
      await new Promise((r) => setTimeout(r, 200));
      status = ((await call(jobLoader as never, { request: request(`/api/jobs/${jobId}`, { cookie: cookies.engineer }), params: { jobId } })).body as { status: string }).status;
    }
    expect(status).toBe("successful");
    const { loader: resultsLoader } = await api.results();
    const results = await call(resultsLoader as never, { request: request(`/api/jobs/${jobId}/results`, { cookie: cookies.engineer }), params: { jobId } });
    const files = (results.body as { files: { format: string; title: string; type: string }[] }).files;
    expect(files.map((f) => f.format).sort()).toEqual([...formats].sort());
    // Media types: RFC 7946 §12 (application/geo+json), RFC 8142 (application/geo+json-seq).
    expect(files.find((f) => f.format === "geojson")!.type).toBe("application/geo+json");
    expect(files.find((f) => f.format === "ndjson")!.type).toBe("application/geo+json-seq");
    // The SVG holds both layers: the input polyline and the fitted curves (path `C` commands, SVG 1.1 §8.3.6).
    const svgLink = (results.body as { files: { href: string; format: string }[] }).files.find((f) => f.format === "svg")!;
    const { loader: downloadLoader } = await api.download();
    const svg = await call(downloadLoader as never, { request: request(svgLink.href, { cookie: cookies.engineer }), params: { outputId: svgLink.href.split("/")[2]! } });
    const text = String(svg.body);
    expect(text).toMatch(/<g id="input"[^>]*>\s*<path /);
    expect(text).toMatch(/<g id="output"[\s\S]*d="M[^"]* C/);
  });

  it("refuses an unknown format before queuing", async () => {
    const { listDatasets } = await import("../../../app/.server/datasets.server");
    const dataset = (await listDatasets())[0]!;
    const { action: executeAction } = await api.execution();
    const res = await call(executeAction as never, { request: execute({ dataset: dataset.id, tolerance: 8, formats: ["dwg"] }, cookies.engineer!), params: { processId: "fit" } });
    expect(res.status).toBe(400);
    expect((res.body as { detail: string }).detail).toMatch(/^formats/);
  });
});

describe("bad input is refused with the file and the reason, and nothing is stored", () => {
  it("refuses a file that is not GeoJSON", async () => {
    const before = await datasetCount();
    const { action } = await api.datasets();
    const res = await call(action as never, { request: upload("roads.geojson", "this is not json", cookies.engineer!) });
    expect(res.status).toBe(400);
    expect((res.body as { detail: string }).detail).toContain("roads.geojson");
    expect(await datasetCount()).toBe(before);
  });

  it("refuses GeoJSON with no line features", async () => {
    const before = await datasetCount();
    const { action } = await api.datasets();
    const points = JSON.stringify({ type: "FeatureCollection", features: [{ type: "Feature", properties: {}, geometry: { type: "Point", coordinates: [1, 2] } }] });
    const res = await call(action as never, { request: upload("wells.geojson", points, cookies.engineer!) });
    expect(res.status).toBe(400);
    expect((res.body as { detail: string }).detail).toContain("wells.geojson");
    expect(await datasetCount()).toBe(before);
  });

  it("refuses non-finite coordinates, naming the feature", async () => {
    const before = await datasetCount();
    const { action } = await api.datasets();
    // JSON has no NaN literal (RFC 8259 §6), so a non-finite value arrives as a huge exponent or a string.
    const bad = `{"type":"FeatureCollection","features":[{"type":"Feature","properties":{},"geometry":{"type":"LineString","coordinates":[[1,2],[3,4]]}},{"type":"Feature","properties":{},"geometry":{"type":"LineString","coordinates":[[1,2],[1e999,4]]}}]}`;
    const res = await call(action as never, { request: upload("lanes.geojson", bad, cookies.engineer!) });
    expect(res.status).toBe(400);
    const detail = (res.body as { detail: string }).detail;
    expect(detail).toContain("lanes.geojson");
    expect(detail).toMatch(/feature 1/i);
    expect(await datasetCount()).toBe(before);
  });

  it("refuses a tolerance that is not a positive number before queuing anything", async () => {
    const { listDatasets } = await import("../../../app/.server/datasets.server");
    const { listJobs } = await import("../../../app/.server/jobs.server");
    const dataset = (await listDatasets())[0]!;
    const jobsBefore = (await listJobs({ limit: 1000 })).length;
    const { action } = await api.execution();
    for (const tolerance of [-1, 0, "five", null]) {
      const res = await call(action as never, { request: execute({ dataset: dataset.id, tolerance }, cookies.engineer!), params: { processId: "fit" } });
      expect(res.status).toBe(400);
      expect((res.body as { detail: string }).detail).toMatch(/^tolerance:/);
    }
    expect((await listJobs({ limit: 1000 })).length).toBe(jobsBefore);
  });
});

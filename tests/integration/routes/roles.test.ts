import { beforeAll, describe, expect, it } from "vitest";
import { bootTestApp, call, request } from "./harness";

// DESIGN.md "People and roles": every loader, action and API route checks the role on the
// server; a consumer who types an engineer's URL gets 403, not a page.

type Role = "admin" | "engineer" | "operator" | "consumer";
const ROLES: Role[] = ["admin", "engineer", "operator", "consumer"];
let cookies: Record<string, string>;
let datasetId: string;

beforeAll(async () => {
  ({ cookies } = await bootTestApp());
  const { listDatasets } = await import("../../../app/.server/datasets.server");
  const datasets = await listDatasets();
  expect(datasets.length).toBeGreaterThan(0); // the demo seed loads a sample
  datasetId = datasets[0]!.id;
});

const MISSING = "00000000-0000-4000-8000-000000000000";

interface Case {
  name: string;
  load: () => Promise<{ loader?: unknown; action?: unknown }>;
  kind: "loader" | "action";
  path: () => string;
  params?: () => Record<string, string>;
  init?: () => RequestInit;
  allowed: Role[];
}

const form = (entries: Record<string, string>): RequestInit => ({ method: "POST", body: new URLSearchParams(entries) });
const teamRead: Role[] = ["admin", "engineer", "operator"];

const cases: Case[] = [
  { name: "datasets page", load: () => import("../../../app/routes/datasets"), kind: "loader", path: () => "/datasets", allowed: teamRead },
  { name: "upload (console)", load: () => import("../../../app/routes/datasets"), kind: "action", path: () => "/datasets", init: () => form({}), allowed: ["admin", "engineer"] },
  { name: "dataset page", load: () => import("../../../app/routes/dataset"), kind: "loader", path: () => `/datasets/${datasetId}`, params: () => ({ datasetId }), allowed: teamRead },
  { name: "run fit (console)", load: () => import("../../../app/routes/dataset"), kind: "action", path: () => `/datasets/${datasetId}`, params: () => ({ datasetId }), init: () => form({ tolerance: "-1" }), allowed: ["admin", "engineer"] },
  { name: "jobs page", load: () => import("../../../app/routes/jobs"), kind: "loader", path: () => "/jobs", allowed: teamRead },
  { name: "job page", load: () => import("../../../app/routes/job"), kind: "loader", path: () => `/jobs/${MISSING}`, params: () => ({ jobId: MISSING }), allowed: teamRead },
  { name: "job live status", load: () => import("../../../app/routes/job-live"), kind: "loader", path: () => `/jobs/${MISSING}/live`, params: () => ({ jobId: MISSING }), allowed: teamRead },
  { name: "dismiss (console)", load: () => import("../../../app/routes/job"), kind: "action", path: () => `/jobs/${MISSING}`, params: () => ({ jobId: MISSING }), init: () => form({ intent: "dismiss" }), allowed: ["admin", "engineer", "operator"] },
  { name: "retry (console)", load: () => import("../../../app/routes/job"), kind: "action", path: () => `/jobs/${MISSING}`, params: () => ({ jobId: MISSING }), init: () => form({ intent: "retry" }), allowed: ["admin", "operator"] },
  { name: "publish (console)", load: () => import("../../../app/routes/job"), kind: "action", path: () => `/jobs/${MISSING}`, params: () => ({ jobId: MISSING }), init: () => form({ intent: "publish", outputId: MISSING }), allowed: ["admin", "engineer"] },
  { name: "library", load: () => import("../../../app/routes/library"), kind: "loader", path: () => "/library", allowed: ROLES },
  { name: "download", load: () => import("../../../app/routes/output-download"), kind: "loader", path: () => `/outputs/${MISSING}/download`, params: () => ({ outputId: MISSING }), allowed: ROLES },
  { name: "GET /api/processes", load: () => import("../../../app/routes/api.processes"), kind: "loader", path: () => "/api/processes", allowed: teamRead },
  { name: "GET /api/processes/fit", load: () => import("../../../app/routes/api.process"), kind: "loader", path: () => "/api/processes/fit", params: () => ({ processId: "fit" }), allowed: teamRead },
  { name: "POST /api/processes/fit/execution", load: () => import("../../../app/routes/api.process-execution"), kind: "action", path: () => "/api/processes/fit/execution", params: () => ({ processId: "fit" }), init: () => ({ method: "POST", body: "{}", headers: { "Content-Type": "application/json" } }), allowed: ["admin", "engineer"] },
  { name: "GET /api/jobs", load: () => import("../../../app/routes/api.jobs"), kind: "loader", path: () => "/api/jobs", allowed: teamRead },
  { name: "GET /api/jobs/{id}", load: () => import("../../../app/routes/api.job"), kind: "loader", path: () => `/api/jobs/${MISSING}`, params: () => ({ jobId: MISSING }), allowed: teamRead },
  { name: "DELETE /api/jobs/{id}", load: () => import("../../../app/routes/api.job"), kind: "action", path: () => `/api/jobs/${MISSING}`, params: () => ({ jobId: MISSING }), init: () => ({ method: "DELETE" }), allowed: ["admin", "engineer", "operator"] },
  { name: "GET /api/jobs/{id}/results", load: () => import("../../../app/routes/api.job-results"), kind: "loader", path: () => `/api/jobs/${MISSING}/results`, params: () => ({ jobId: MISSING }), allowed: teamRead },
  { name: "GET /api/datasets", load: () => import("../../../app/routes/api.datasets"), kind: "loader", path: () => "/api/datasets", allowed: teamRead },
  { name: "POST /api/datasets", load: () => import("../../../app/routes/api.datasets"), kind: "action", path: () => "/api/datasets", init: () => ({ method: "POST", body: "x", headers: { "Content-Type": "text/plain" } }), allowed: ["admin", "engineer"] },
  { name: "GET /api/datasets/{id}", load: () => import("../../../app/routes/api.dataset"), kind: "loader", path: () => `/api/datasets/${datasetId}`, params: () => ({ datasetId }), allowed: teamRead },
  // Definitions, schedules and the overview board.
  { name: "overview board", load: () => import("../../../app/routes/overview"), kind: "loader", path: () => "/overview", allowed: teamRead },
  { name: "retry (board)", load: () => import("../../../app/routes/overview"), kind: "action", path: () => "/overview", init: () => form({ intent: "retry", jobId: MISSING }), allowed: ["admin", "operator"] },
  { name: "definitions page", load: () => import("../../../app/routes/definitions"), kind: "loader", path: () => "/definitions", allowed: teamRead },
  { name: "new definition page", load: () => import("../../../app/routes/definitions.new"), kind: "loader", path: () => "/definitions/new", allowed: ["admin", "engineer"] },
  { name: "save definition (console)", load: () => import("../../../app/routes/definitions.new"), kind: "action", path: () => "/definitions/new", init: () => form({ intent: "save", name: "x" }), allowed: ["admin", "engineer"] },
  { name: "preview definition (console)", load: () => import("../../../app/routes/definitions.new"), kind: "action", path: () => "/definitions/new", init: () => form({ intent: "preview" }), allowed: ["admin", "engineer"] },
  { name: "definition page", load: () => import("../../../app/routes/definitions.detail"), kind: "loader", path: () => `/definitions/${MISSING}`, params: () => ({ definitionId: MISSING }), allowed: teamRead },
  { name: "run definition (console)", load: () => import("../../../app/routes/definitions.detail"), kind: "action", path: () => `/definitions/${MISSING}`, params: () => ({ definitionId: MISSING }), init: () => form({ dataset: datasetId }), allowed: ["admin", "engineer"] },
  { name: "edit definition page", load: () => import("../../../app/routes/definitions.edit"), kind: "loader", path: () => `/definitions/${MISSING}/edit`, params: () => ({ definitionId: MISSING }), allowed: ["admin", "engineer"] },
  { name: "save new version (console)", load: () => import("../../../app/routes/definitions.edit"), kind: "action", path: () => `/definitions/${MISSING}/edit`, params: () => ({ definitionId: MISSING }), init: () => form({ intent: "save" }), allowed: ["admin", "engineer"] },
  { name: "schedules page", load: () => import("../../../app/routes/schedules"), kind: "loader", path: () => "/schedules", allowed: teamRead },
  { name: "create schedule (console)", load: () => import("../../../app/routes/schedules"), kind: "action", path: () => "/schedules", init: () => form({ intent: "save", cron: "0 2 * * *" }), allowed: ["admin", "engineer"] },
  { name: "pause schedule (console list)", load: () => import("../../../app/routes/schedules"), kind: "action", path: () => "/schedules", init: () => form({ intent: "pause", scheduleId: MISSING }), allowed: ["admin", "operator"] },
  { name: "check cron (console)", load: () => import("../../../app/routes/schedules"), kind: "action", path: () => "/schedules", init: () => form({ intent: "check", cron: "0 2 * * *" }), allowed: teamRead },
  { name: "schedule page", load: () => import("../../../app/routes/schedules.detail"), kind: "loader", path: () => `/schedules/${MISSING}`, params: () => ({ scheduleId: MISSING }), allowed: teamRead },
  { name: "resume schedule (console)", load: () => import("../../../app/routes/schedules.detail"), kind: "action", path: () => `/schedules/${MISSING}`, params: () => ({ scheduleId: MISSING }), init: () => form({ intent: "resume" }), allowed: ["admin", "operator"] },
  { name: "edit schedule (console)", load: () => import("../../../app/routes/schedules.detail"), kind: "action", path: () => `/schedules/${MISSING}`, params: () => ({ scheduleId: MISSING }), init: () => form({ intent: "save", cron: "0 2 * * *" }), allowed: ["admin", "engineer"] },
  { name: "delete schedule (console)", load: () => import("../../../app/routes/schedules.detail"), kind: "action", path: () => `/schedules/${MISSING}`, params: () => ({ scheduleId: MISSING }), init: () => form({ intent: "delete" }), allowed: ["admin", "engineer"] },
  { name: "GET /api/definitions", load: () => import("../../../app/routes/api.definitions"), kind: "loader", path: () => "/api/definitions", allowed: teamRead },
  { name: "POST /api/definitions", load: () => import("../../../app/routes/api.definitions"), kind: "action", path: () => "/api/definitions", init: () => ({ method: "POST", body: "{}", headers: { "Content-Type": "application/json" } }), allowed: ["admin", "engineer"] },
  { name: "POST /api/definitions/preview", load: () => import("../../../app/routes/api.definitions-preview"), kind: "action", path: () => "/api/definitions/preview", init: () => ({ method: "POST", body: "{}", headers: { "Content-Type": "application/json" } }), allowed: ["admin", "engineer"] },
  { name: "GET /api/definitions/{id}", load: () => import("../../../app/routes/api.definition"), kind: "loader", path: () => `/api/definitions/${MISSING}`, params: () => ({ definitionId: MISSING }), allowed: teamRead },
  { name: "PUT /api/definitions/{id}", load: () => import("../../../app/routes/api.definition"), kind: "action", path: () => `/api/definitions/${MISSING}`, params: () => ({ definitionId: MISSING }), init: () => ({ method: "PUT", body: "{}", headers: { "Content-Type": "application/json" } }), allowed: ["admin", "engineer"] },
  { name: "POST /api/definitions/{id}/execution", load: () => import("../../../app/routes/api.definition-execution"), kind: "action", path: () => `/api/definitions/${MISSING}/execution`, params: () => ({ definitionId: MISSING }), init: () => ({ method: "POST", body: "{}", headers: { "Content-Type": "application/json" } }), allowed: ["admin", "engineer"] },
  { name: "GET /api/schedules", load: () => import("../../../app/routes/api.schedules"), kind: "loader", path: () => "/api/schedules", allowed: teamRead },
  { name: "POST /api/schedules", load: () => import("../../../app/routes/api.schedules"), kind: "action", path: () => "/api/schedules", init: () => ({ method: "POST", body: "{}", headers: { "Content-Type": "application/json" } }), allowed: ["admin", "engineer"] },
  { name: "GET /api/schedules/{id}", load: () => import("../../../app/routes/api.schedule"), kind: "loader", path: () => `/api/schedules/${MISSING}`, params: () => ({ scheduleId: MISSING }), allowed: teamRead },
  { name: "PATCH /api/schedules/{id} (pause)", load: () => import("../../../app/routes/api.schedule"), kind: "action", path: () => `/api/schedules/${MISSING}`, params: () => ({ scheduleId: MISSING }), init: () => ({ method: "PATCH", body: JSON.stringify({ paused: true }), headers: { "Content-Type": "application/json" } }), allowed: ["admin", "operator"] },
  { name: "PATCH /api/schedules/{id} (edit)", load: () => import("../../../app/routes/api.schedule"), kind: "action", path: () => `/api/schedules/${MISSING}`, params: () => ({ scheduleId: MISSING }), init: () => ({ method: "PATCH", body: JSON.stringify({ cron: "0 3 * * *" }), headers: { "Content-Type": "application/json" } }), allowed: ["admin", "engineer"] },
  { name: "DELETE /api/schedules/{id}", load: () => import("../../../app/routes/api.schedule"), kind: "action", path: () => `/api/schedules/${MISSING}`, params: () => ({ scheduleId: MISSING }), init: () => ({ method: "DELETE" }), allowed: ["admin", "engineer"] },
];

describe("every route checks the role on the server", () => {
  for (const c of cases) {
    for (const role of ROLES) {
      const allowed = c.allowed.includes(role);
      it(`${c.name}: ${role} is ${allowed ? "let through" : "refused with 403"}`, async () => {
        const mod = await c.load();
        const fn = mod[c.kind] as (args: never) => unknown;
        const res = await call(fn, { request: request(c.path(), { ...(c.init?.() ?? {}), cookie: cookies[role] }), params: c.params?.() });
        if (allowed) expect(res.status).not.toBe(403);
        else expect(res.status).toBe(403);
      });
    }
    it(`${c.name}: without a session ${c.path().startsWith("/api/") ? "answers 401" : "redirects to sign-in"}`, async () => {
      const mod = await c.load();
      const fn = mod[c.kind] as (args: never) => unknown;
      const res = await call(fn, { request: request(c.path(), c.init?.() ?? {}), params: c.params?.() });
      if (c.path().startsWith("/api/")) {
        expect(res.status).toBe(401);
      } else {
        expect(res.status).toBe(302);
        expect(res.headers.get("Location")).toMatch(/^\/sign-in\?redirectTo=/);
      }
    });
  }
});

import { z } from "zod";
import { problem, requirePermission } from "../.server/guards.server";
import { statusDocument } from "../.server/jobs.server";
import { submitProcess } from "../.server/submit.server";
import type { Route } from "./+types/api.process-execution";

const ExecuteRequest = z.object({ inputs: z.record(z.string(), z.unknown()) }, { error: "the body must be a JSON object with an `inputs` object" });

export async function loader() {
  return problem(405, "Method not allowed", "POST an execute request ({\"inputs\": {...}}) to run the process.");
}

/**
 * OGC API - Processes Part 1, POST /processes/{processID}/execution. Lissom always runs
 * asynchronously: 201 Created, `Location` of the job, and its status document.
 */
export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return problem(405, "Method not allowed", "Use POST.");
  const user = await requirePermission(request, { job: ["submit"] });
  let body: unknown;
  try {
    body = await request.json();
  } catch {
    return problem(400, "Invalid body", "The body is not JSON. Send {\"inputs\": {\"dataset\": \"…\", \"tolerance\": 5}}.");
  }
  const parsed = ExecuteRequest.safeParse(body);
  if (!parsed.success) return problem(400, "Invalid body", parsed.error.issues[0]!.message, { field: "inputs" });
  const outcome = await submitProcess(params.processId, parsed.data.inputs, user.id);
  if (!outcome.ok) {
    const extra = outcome.status === 404 ? { type: "http://www.opengis.net/def/exceptions/ogcapi-processes-1/1.0/no-such-process" } : {};
    return problem(outcome.status, outcome.title, outcome.message, { ...extra, ...(outcome.fields ? { fields: outcome.fields } : {}) });
  }
  return Response.json(statusDocument(outcome.job), { status: 201, headers: { Location: `/api/jobs/${outcome.job.id}` } });
}

import { runDefinition } from "../.server/definitions.server";
import { problem, requirePermission } from "../.server/guards.server";
import { statusDocument } from "../.server/jobs.server";
import type { Route } from "./+types/api.definition-execution";

export async function loader() {
  return problem(405, "Method not allowed", 'POST {"dataset": "…"} to run this definition version.');
}

/**
 * POST /api/definitions/{id}/execution: runs this exact definition version. Body: `{dataset,
 * datasetVersion?, priority?, maxAttempts?}` (latest dataset version and the definition's
 * attempts by default). Like OGC API - Processes execution: 201, `Location` of the job, and
 * its status document.
 */
export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return problem(405, "Method not allowed", "Use POST.");
  const user = await requirePermission(request, { job: ["submit"] });
  let body: unknown;
  try {
    body = await request.json();
  } catch {
    return problem(400, "Invalid body", 'The body is not JSON. Send {"dataset": "<dataset id>"}.');
  }
  const outcome = await runDefinition({ definitionId: params.definitionId, run: body, userId: user.id });
  if (!outcome.ok) return problem(outcome.status, outcome.title, outcome.message, outcome.fields ? { fields: outcome.fields } : {});
  return Response.json({ ...statusDocument(outcome.job), definitionID: outcome.job.definitionId }, { status: 201, headers: { Location: `/api/jobs/${outcome.job.id}` } });
}

import { z } from "zod";
import { PreviewError, parseSteps, previewDefinition } from "../.server/definitions.server";
import { problem, requirePermission } from "../.server/guards.server";
import type { Route } from "./+types/api.definitions-preview";

export async function loader() {
  return problem(405, "Method not allowed", 'POST {"steps": [...], "dataset": "…", "feature": 0} to try steps on one feature.');
}

const PreviewRequest = z.object({
  steps: z.unknown(),
  dataset: z.string({ error: "dataset: must be a dataset id" }).min(1, "dataset: must be a dataset id"),
  feature: z.number({ error: "feature: must be a feature number" }).int("feature: must be a whole number").min(0, "feature: must be 0 or more").default(0),
});

/**
 * POST /api/definitions/preview: runs steps on one feature of a dataset's latest version
 * without saving anything. Answers the figures a job would report for it, each step's own
 * report, and the lines before and after.
 */
export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return problem(405, "Method not allowed", "Use POST.");
  await requirePermission(request, { definition: ["write"] });
  let body: unknown;
  try {
    body = await request.json();
  } catch {
    return problem(400, "Invalid body", "The body is not JSON.");
  }
  const req = PreviewRequest.safeParse(body);
  if (!req.success) return problem(400, "Invalid request", req.error.issues.map((i) => i.message).join("; "));
  const steps = parseSteps(req.data.steps);
  if (!steps.ok) return problem(400, "Invalid steps", steps.message, { fields: steps.issues });
  try {
    return Response.json(await previewDefinition(steps.data, req.data.dataset, req.data.feature));
  } catch (error) {
    if (error instanceof PreviewError) return problem(400, "Cannot preview", error.message);
    throw error;
  }
}

import { QueueUnavailableError } from "../../jobs/queue";
import { problem, requirePermission } from "../.server/guards.server";
import { JobStateError, dismissJob, getJob, statusDocument } from "../.server/jobs.server";
import type { Route } from "./+types/api.job";

const NO_SUCH_JOB = "http://www.opengis.net/def/exceptions/ogcapi-processes-1/1.0/no-such-job";

/** OGC API - Processes Part 1, /jobs/{jobID}: the status document. */
export async function loader({ request, params }: Route.LoaderArgs) {
  await requirePermission(request, { job: ["read"] });
  const job = await getJob(params.jobId);
  if (!job) return problem(404, "No such job", `There is no job "${params.jobId}".`, { type: NO_SUCH_JOB });
  return Response.json(statusDocument(job));
}

/** DELETE /jobs/{jobID}: dismiss (OGC API - Processes Part 1, "Dismiss" conformance class). */
export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "DELETE") return problem(405, "Method not allowed", "Use DELETE to dismiss a job.");
  const user = await requirePermission(request, { job: ["cancel"] });
  try {
    const job = await dismissJob(params.jobId, user.email);
    if (!job) return problem(404, "No such job", `There is no job "${params.jobId}".`, { type: NO_SUCH_JOB });
    return Response.json(statusDocument(job));
  } catch (error) {
    if (error instanceof JobStateError) return problem(409, "Cannot dismiss", error.message);
    if (error instanceof QueueUnavailableError) return problem(503, "Queue unavailable", error.message);
    throw error;
  }
}

import { problem, requirePermission } from "../.server/guards.server";
import { getJob, jobOutputs } from "../.server/jobs.server";
import type { Route } from "./+types/api.job-results";

/** OGC API - Processes Part 1, /jobs/{jobID}/results: links to the outputs of a successful job. */
export async function loader({ request, params }: Route.LoaderArgs) {
  await requirePermission(request, { job: ["read"] });
  const job = await getJob(params.jobId);
  if (!job) {
    return problem(404, "No such job", `There is no job "${params.jobId}".`, { type: "http://www.opengis.net/def/exceptions/ogcapi-processes-1/1.0/no-such-job" });
  }
  if (job.status === "failed") {
    return problem(500, "Job failed", job.message ?? "The job failed.", { type: "http://www.opengis.net/def/exceptions/ogcapi-processes-1/1.0/job-results-failed" });
  }
  if (job.status !== "successful") {
    return problem(404, "Results not ready", `The job is ${job.status}.`, { type: "http://www.opengis.net/def/exceptions/ogcapi-processes-1/1.0/result-not-ready" });
  }
  const outputs = await jobOutputs(job.id);
  const links = outputs.map((o) => ({ href: `/outputs/${o.id}/download`, type: o.mediaType, title: o.fileName, format: o.format }));
  // `result` is the first requested format; every file is listed under `files`.
  return Response.json({ ...(links[0] ? { result: links[0] } : {}), files: links });
}

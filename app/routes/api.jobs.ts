import { z } from "zod";
import { problem, requirePermission } from "../.server/guards.server";
import { listJobs, statusDocument } from "../.server/jobs.server";
import type { Route } from "./+types/api.jobs";

const Query = z.object({
  status: z.enum(["accepted", "running", "successful", "failed", "dismissed"]).optional(),
  limit: z.coerce.number().int().min(1).max(1000).default(100),
});

/** OGC API - Processes Part 1, /jobs: the job list, newest first. */
export async function loader({ request }: Route.LoaderArgs) {
  await requirePermission(request, { job: ["read"] });
  const query = Query.safeParse(Object.fromEntries(new URL(request.url).searchParams));
  if (!query.success) return problem(400, "Invalid query", query.error.issues.map((i) => `${i.path.join(".")}: ${i.message}`).join("; "));
  const jobs = await listJobs({ status: query.data.status ? [query.data.status] : undefined, limit: query.data.limit });
  return Response.json({ jobs: jobs.map(statusDocument), links: [{ href: "/api/jobs", rel: "self", type: "application/json" }] });
}

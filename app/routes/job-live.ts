import { z } from "zod";
import { requirePermission } from "../.server/guards.server";
import { getJob, jobLogEntries } from "../.server/jobs.server";
import type { Route } from "./+types/job-live";

const Query = z.object({ after: z.coerce.number().int().min(0).default(0) });

/** What the job page polls: status, progress and the log entries after the last one it has. */
export async function loader({ request, params }: Route.LoaderArgs) {
  await requirePermission(request, { job: ["read"] });
  const query = Query.safeParse(Object.fromEntries(new URL(request.url).searchParams));
  if (!query.success) return Response.json({ detail: "after must be a log entry id" }, { status: 400 });
  const job = await getJob(params.jobId);
  if (!job) return Response.json({ detail: "No such job" }, { status: 404 });
  const log = await jobLogEntries(job.id, query.data.after);
  return Response.json(
    {
      status: job.status,
      progress: job.progress,
      featuresDone: job.featuresDone,
      featuresTotal: job.featuresTotal,
      message: job.message,
      log: log.map((l) => ({ id: l.id, time: l.time.toISOString(), level: l.level, message: l.message, featureIndex: l.featureIndex })),
    },
    { headers: { "Cache-Control": "no-store" } },
  );
}

import { problem, requirePermission } from "../.server/guards.server";
import { createSchedule, getSchedule, listSchedules, scheduleDocument } from "../.server/schedules.server";
import type { Route } from "./+types/api.schedules";

/** GET /api/schedules: every schedule with its next run time. */
export async function loader({ request }: Route.LoaderArgs) {
  await requirePermission(request, { schedule: ["read"] });
  return Response.json({ schedules: (await listSchedules()).map(scheduleDocument) });
}

/**
 * POST /api/schedules: `{definition, dataset, cron, timezone?, paused?}`. `definition` is a
 * definition version id (the schedule runs exactly that version); each run takes the
 * dataset's latest version. 201 with the schedule; 400 for a bad cron expression or time zone.
 */
export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return problem(405, "Method not allowed", "POST a schedule to create it.");
  const user = await requirePermission(request, { schedule: ["write"] });
  let body: unknown;
  try {
    body = await request.json();
  } catch {
    return problem(400, "Invalid body", 'The body is not JSON. Send {"definition": "…", "dataset": "…", "cron": "0 2 * * *", "timezone": "UTC"}.');
  }
  const outcome = await createSchedule(body, user.id);
  if (!outcome.ok) return problem(outcome.status, outcome.status === 503 ? "Queue unavailable" : "Invalid schedule", outcome.message, outcome.fields ? { fields: outcome.fields } : {});
  const doc = await getSchedule(outcome.schedule.id);
  return Response.json(scheduleDocument(doc!), { status: 201, headers: { Location: `/api/schedules/${outcome.schedule.id}` } });
}

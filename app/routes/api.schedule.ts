import { problem, requirePermission } from "../.server/guards.server";
import { deleteSchedule, getSchedule, scheduleDocument, setSchedulePaused, updateSchedule } from "../.server/schedules.server";
import type { Route } from "./+types/api.schedule";

/** GET /api/schedules/{id}: the schedule, its next run times and its last runs. */
export async function loader({ request, params }: Route.LoaderArgs) {
  await requirePermission(request, { schedule: ["read"] });
  const s = await getSchedule(params.scheduleId);
  if (!s) return problem(404, "No such schedule", `There is no schedule "${params.scheduleId}".`);
  return Response.json(scheduleDocument(s));
}

/**
 * PATCH /api/schedules/{id}: `{paused}` alone pauses or resumes (operators may); any other
 * field (`definition`, `dataset`, `cron`, `timezone`) is an edit (engineers). DELETE removes
 * the schedule; the jobs it ran stay.
 */
export async function action({ request, params }: Route.ActionArgs) {
  const notFound = () => problem(404, "No such schedule", `There is no schedule "${params.scheduleId}".`);
  if (request.method === "DELETE") {
    await requirePermission(request, { schedule: ["write"] });
    const outcome = await deleteSchedule(params.scheduleId);
    if (!outcome) return notFound();
    if (!outcome.ok) return problem(outcome.status, "Queue unavailable", outcome.message);
    return new Response(null, { status: 204 });
  }
  if (request.method !== "PATCH") return problem(405, "Method not allowed", "Use PATCH to change a schedule or DELETE to remove it.");
  await requirePermission(request, { schedule: ["read"] });
  let body: unknown;
  try {
    body = await request.json();
  } catch {
    return problem(400, "Invalid body", 'The body is not JSON. Send {"paused": true} or the fields to change.');
  }
  if (!body || typeof body !== "object" || Array.isArray(body)) return problem(400, "Invalid body", "The body must be a JSON object.");
  const keys = Object.keys(body);
  const onlyPause = keys.length === 1 && keys[0] === "paused";
  await requirePermission(request, onlyPause ? { schedule: ["pause"] } : { schedule: ["write"] });
  let outcome;
  if (onlyPause) {
    const paused = (body as { paused: unknown }).paused;
    if (typeof paused !== "boolean") return problem(400, "Invalid schedule", "Paused: must be true or false.", { fields: [{ field: "paused", message: "must be true or false" }] });
    outcome = await setSchedulePaused(params.scheduleId, paused);
  } else {
    outcome = await updateSchedule(params.scheduleId, body);
  }
  if (!outcome) return notFound();
  if (!outcome.ok) return problem(outcome.status, outcome.status === 503 ? "Queue unavailable" : "Invalid schedule", outcome.message, outcome.fields ? { fields: outcome.fields } : {});
  return Response.json(scheduleDocument((await getSchedule(params.scheduleId))!));
}

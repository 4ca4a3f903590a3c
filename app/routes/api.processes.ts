import { requirePermission } from "../.server/guards.server";
import { processSummary, processes, type ProcessId } from "../.server/processes.server";
import type { Route } from "./+types/api.processes";

/** OGC API - Processes Part 1, /processes: the process list. */
export async function loader({ request }: Route.LoaderArgs) {
  await requirePermission(request, { job: ["read"] });
  return Response.json({
    processes: (Object.keys(processes) as ProcessId[]).map(processSummary),
    links: [{ href: "/api/processes", rel: "self", type: "application/json" }],
  });
}

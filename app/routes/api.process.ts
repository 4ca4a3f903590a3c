import { problem, requirePermission } from "../.server/guards.server";
import { isProcessId, processDescription } from "../.server/processes.server";
import type { Route } from "./+types/api.process";

/** OGC API - Processes Part 1, /processes/{processID}: one process description. */
export async function loader({ request, params }: Route.LoaderArgs) {
  await requirePermission(request, { job: ["read"] });
  if (!isProcessId(params.processId)) {
    return problem(404, "No such process", `There is no process "${params.processId}".`, {
      type: "http://www.opengis.net/def/exceptions/ogcapi-processes-1/1.0/no-such-process",
    });
  }
  return Response.json(processDescription(params.processId));
}

import { datasetDocument, getDataset } from "../.server/datasets.server";
import { problem, requirePermission } from "../.server/guards.server";
import type { Route } from "./+types/api.dataset";

export async function loader({ request, params }: Route.LoaderArgs) {
  await requirePermission(request, { dataset: ["read"] });
  const dataset = await getDataset(params.datasetId);
  if (!dataset) return problem(404, "No such dataset", `There is no dataset "${params.datasetId}".`);
  return Response.json(datasetDocument(dataset));
}

import { handleDatasetUpload } from "../.server/dataset-upload.server";
import { datasetDocument, getDataset, listDatasets } from "../.server/datasets.server";
import { problem, requirePermission } from "../.server/guards.server";
import type { Route } from "./+types/api.datasets";

export async function loader({ request }: Route.LoaderArgs) {
  await requirePermission(request, { dataset: ["read"] });
  const datasets = await listDatasets();
  return Response.json({
    datasets: datasets.map((d) => ({ id: d.id, name: d.name, latestVersion: d.latestVersion, href: `/api/datasets/${d.id}` })),
  });
}

/** POST /api/datasets: multipart upload, field `file` (and optional `name`); 201 with the dataset document. */
export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return problem(405, "Method not allowed", "Use POST with multipart/form-data.");
  const user = await requirePermission(request, { dataset: ["upload"] });
  const outcome = await handleDatasetUpload(request, user.id);
  if (!outcome.ok) return problem(outcome.status, "Upload refused", outcome.message, outcome.field ? { field: outcome.field } : {});
  const dataset = await getDataset(outcome.datasetId);
  return Response.json(datasetDocument(dataset!), { status: 201, headers: { Location: `/api/datasets/${outcome.datasetId}` } });
}

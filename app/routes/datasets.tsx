import { Link, data, redirect, useActionData } from "react-router";
import { ACCEPTED_EXTENSIONS, MAX_UPLOAD_BYTES, formatBytes } from "../formats";
import { handleDatasetUpload } from "../.server/dataset-upload.server";
import { listDatasets } from "../.server/datasets.server";
import { setNotice } from "../.server/flash.server";
import { requirePermission } from "../.server/guards.server";
import { can } from "../.server/permissions.server";
import { ListTable } from "../components/list-table";
import { Card, EmptyState, PageHeader } from "../components/page";
import { UploadForm } from "../components/upload-form";
import type { Route } from "./+types/datasets";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requirePermission(request, { dataset: ["read"] });
  return {
    datasets: await listDatasets(),
    canUpload: can(user.role, { dataset: ["upload"] }),
    accept: [...ACCEPTED_EXTENSIONS],
    maxBytesLabel: formatBytes(MAX_UPLOAD_BYTES),
  };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requirePermission(request, { dataset: ["upload"] });
  const outcome = await handleDatasetUpload(request, user.id);
  if (!outcome.ok) return data({ error: outcome.message }, { status: outcome.status });
  throw redirect(`/datasets/${outcome.datasetId}`, { headers: await setNotice(`Stored ${outcome.name} as version ${outcome.version}.`) });
}

export default function Datasets({ loaderData }: Route.ComponentProps) {
  const { datasets, canUpload, accept, maxBytesLabel } = loaderData;
  const result = useActionData<typeof action>();
  return (
    <>
      <PageHeader title="Datasets" subtitle="Uploaded linework. A re-upload under the same name becomes a new version." />
      {canUpload && (
        <Card title="Upload" className="mb-6">
          <UploadForm key={result?.error} accept={accept} maxBytesLabel={maxBytesLabel} serverError={result?.error} />
        </Card>
      )}
      {datasets.length === 0 ? (
        <EmptyState title="No datasets yet">{canUpload ? "Upload a GeoJSON file of lines to begin." : "Engineers upload datasets; they will appear here."}</EmptyState>
      ) : (
        <ListTable columns={[{ label: "Name" }, { label: "Version" }, { label: "Format" }, { label: "Features", numeric: true }, { label: "Vertices", numeric: true }, { label: "CRS" }]}>
          {datasets.map((d) => (
            <tr key={d.id} className="border-t border-rule">
              <td className="px-4 py-2">
                <Link to={`/datasets/${d.id}`} className="font-medium text-tide-600 hover:underline">
                  {d.name}
                </Link>
              </td>
              <td className="px-4 py-2">v{d.latestVersion}</td>
              <td className="px-4 py-2">{d.latest?.format}</td>
              <td className="px-4 py-2 text-right tabular-nums">{d.latest?.summary.features.toLocaleString()}</td>
              <td className="px-4 py-2 text-right tabular-nums">{d.latest?.summary.vertices.toLocaleString()}</td>
              <td className="px-4 py-2">{d.latest?.summary.crs.code}</td>
            </tr>
          ))}
        </ListTable>
      )}
    </>
  );
}

export function meta() {
  return [{ title: "Datasets · Lissom" }];
}

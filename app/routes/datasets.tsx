import { Form, Link, data, redirect, useActionData, useNavigation } from "react-router";
import { handleDatasetUpload } from "../.server/dataset-upload.server";
import { listDatasets } from "../.server/datasets.server";
import { setNotice } from "../.server/flash.server";
import { requirePermission } from "../.server/guards.server";
import { can } from "../.server/permissions.server";
import { Card, EmptyState, Notice, PageHeader, buttonClass, inputClass } from "../components/page";
import type { Route } from "./+types/datasets";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requirePermission(request, { dataset: ["read"] });
  return { datasets: await listDatasets(), canUpload: can(user.role, { dataset: ["upload"] }) };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requirePermission(request, { dataset: ["upload"] });
  const outcome = await handleDatasetUpload(request, user.id);
  if (!outcome.ok) return data({ error: outcome.message }, { status: outcome.status });
  throw redirect(`/datasets/${outcome.datasetId}`, { headers: await setNotice(`Stored ${outcome.name} as version ${outcome.version}.`) });
}

export default function Datasets({ loaderData }: Route.ComponentProps) {
  const { datasets, canUpload } = loaderData;
  const result = useActionData<typeof action>();
  const uploading = useNavigation().state === "submitting";
  return (
    <>
      <PageHeader title="Datasets" subtitle="Uploaded linework. A re-upload under the same name becomes a new version." />
      {canUpload && (
        <Card title="Upload" className="mb-6">
          {result?.error && <Notice tone="error">{result.error}</Notice>}
          <Form method="post" encType="multipart/form-data" className="grid gap-4 sm:grid-cols-[2fr_1fr_auto] sm:items-end">
            <label className="block text-sm font-medium">
              File (GeoJSON, newline-delimited GeoJSON, or a zipped Shapefile)
              <input name="file" type="file" required accept=".geojson,.json,.ndjson,.geojsonl,.geojsons,.zip" className={`mt-1 ${inputClass}`} />
            </label>
            <label className="block text-sm font-medium">
              Name <span className="font-normal text-ink-faint">(optional)</span>
              <input name="name" placeholder="from the file name" className={`mt-1 ${inputClass}`} />
            </label>
            <button type="submit" className={buttonClass} disabled={uploading}>
              {uploading ? "Uploading…" : "Upload"}
            </button>
          </Form>
        </Card>
      )}
      {datasets.length === 0 ? (
        <EmptyState title="No datasets yet">{canUpload ? "Upload a GeoJSON file of lines to begin." : "Engineers upload datasets; they will appear here."}</EmptyState>
      ) : (
        <div className="overflow-hidden rounded-card border border-rule bg-card">
          <table className="w-full text-sm">
            <thead className="bg-paper text-left text-ink-soft">
              <tr>
                <th className="px-4 py-2 font-medium">Name</th>
                <th className="px-4 py-2 font-medium">Version</th>
                <th className="px-4 py-2 font-medium">Format</th>
                <th className="px-4 py-2 text-right font-medium">Features</th>
                <th className="px-4 py-2 text-right font-medium">Vertices</th>
                <th className="px-4 py-2 font-medium">CRS</th>
              </tr>
            </thead>
            <tbody>
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
            </tbody>
          </table>
        </div>
      )}
    </>
  );
}

export function meta() {
  return [{ title: "Datasets · Lissom" }];
}

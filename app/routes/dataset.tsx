import { Form, data, redirect, useActionData, useNavigation } from "react-router";
import { getDataset } from "../.server/datasets.server";
import { setNotice } from "../.server/flash.server";
import { requirePermission } from "../.server/guards.server";
import { can } from "../.server/permissions.server";
import { datasetPreview } from "../.server/preview.server";
import { OUTPUT_FORMAT_LABELS, OUTPUT_FORMATS } from "../.server/processes.server";
import { submitProcess } from "../.server/submit.server";
import { LineworkPlot } from "../components/linework-plot";
import { Card, Notice, PageHeader, buttonClass, inputClass } from "../components/page";
import type { Route } from "./+types/dataset";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requirePermission(request, { dataset: ["read"] });
  const dataset = await getDataset(params.datasetId);
  if (!dataset) throw data({ detail: "There is no dataset with this id." }, { status: 404 });
  const latest = dataset.versions[0]!;
  const formats = OUTPUT_FORMATS.map((id) => ({ id, label: OUTPUT_FORMAT_LABELS[id] }));
  return { dataset, formats, preview: await datasetPreview(latest.storagePath), canSubmit: can(user.role, { job: ["submit"] }) };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requirePermission(request, { job: ["submit"] });
  const form = await request.formData();
  const cornerAngle = String(form.get("cornerAngle") ?? "").trim();
  const formats = form.getAll("formats").map(String);
  const outcome = await submitProcess(
    "fit",
    {
      dataset: params.datasetId,
      tolerance: Number(String(form.get("tolerance") ?? "").trim() || NaN),
      ...(cornerAngle ? { cornerAngle: Number(cornerAngle) } : {}),
      ...(formats.length ? { formats } : {}),
    },
    user.id,
  );
  if (!outcome.ok) return data({ error: outcome.message }, { status: outcome.status });
  throw redirect(`/jobs/${outcome.job.id}`, { headers: await setNotice("Job accepted and queued.") });
}

export default function DatasetPage({ loaderData }: Route.ComponentProps) {
  const { dataset, preview, canSubmit, formats } = loaderData;
  const latest = dataset.versions[0]!;
  const s = latest.summary;
  const result = useActionData<typeof action>();
  const busy = useNavigation().state === "submitting";
  const suggested = s.noiseEstimate?.suggestedTolerance;
  return (
    <>
      <PageHeader title={dataset.name} subtitle={`Version ${latest.version} of ${dataset.versions.length} · ${latest.fileName}`} />
      <div className="grid gap-6 lg:grid-cols-[2fr_1fr]">
        <Card title="Linework">
          <LineworkPlot parts={preview.parts} bbox={preview.bbox} geographic={s.crs.code === "EPSG:4326"} />
          {preview.truncated && <p className="mt-2 text-xs text-ink-faint">Showing the first 20,000 vertices.</p>}
        </Card>
        <div className="space-y-6">
          {canSubmit && (
            <Card title="Fit curves">
              {result?.error && <Notice tone="error">{result.error}</Notice>}
              <Form method="post" className="space-y-3">
                <label className="block text-sm font-medium">
                  Tolerance on the ground (m)
                  <input name="tolerance" type="number" step="any" min="0" required defaultValue={suggested ? Number(suggested.toPrecision(2)) : 5} className={`mt-1 ${inputClass}`} />
                </label>
                {suggested !== undefined && <p className="text-xs text-ink-faint">Suggested from the estimated noise: {suggested.toPrecision(2)} m.</p>}
                <label className="block text-sm font-medium">
                  Corner angle (°) <span className="font-normal text-ink-faint">(optional)</span>
                  <input name="cornerAngle" type="number" step="any" min="0" max="180" className={`mt-1 ${inputClass}`} />
                </label>
                <fieldset>
                  <legend className="text-sm font-medium">Output formats</legend>
                  <div className="mt-1 grid gap-1">
                    {formats.map((f) => (
                      <label key={f.id} className="flex items-center gap-2 text-sm">
                        <input type="checkbox" name="formats" value={f.id} defaultChecked={f.id === "geojson"} className="accent-tide-600" />
                        {f.label}
                      </label>
                    ))}
                  </div>
                </fieldset>
                <button type="submit" className={`${buttonClass} w-full`} disabled={busy}>
                  {busy ? "Queuing…" : "Run fit"}
                </button>
              </Form>
            </Card>
          )}
          <Card title="Summary">
            <dl className="grid grid-cols-2 gap-x-4 gap-y-1 text-sm">
              <dt className="text-ink-soft">Features</dt>
              <dd className="tabular-nums">{s.features.toLocaleString()}</dd>
              <dt className="text-ink-soft">Parts</dt>
              <dd className="tabular-nums">{s.parts.toLocaleString()}</dd>
              <dt className="text-ink-soft">Vertices</dt>
              <dd className="tabular-nums">{s.vertices.toLocaleString()}</dd>
              <dt className="text-ink-soft">Geometry</dt>
              <dd>{Object.entries(s.geometryTypes).map(([k, v]) => `${k} ×${v}`).join(", ")}</dd>
              <dt className="text-ink-soft">CRS</dt>
              <dd>
                {s.crs.code}
                {s.crs.nonStandard ? " (non-standard crs member)" : ""}
              </dd>
              {s.noiseEstimate && (
                <>
                  <dt className="text-ink-soft">Noise (est.)</dt>
                  <dd>{s.noiseEstimate.metres.toPrecision(2)} m</dd>
                </>
              )}
              <dt className="text-ink-soft">Attributes</dt>
              <dd>{Object.keys(s.attributes).join(", ") || "none"}</dd>
            </dl>
            {s.warnings.length > 0 && (
              <div className="mt-3">
                <p className="text-sm font-medium">Validation</p>
                <ul className="mt-1 list-disc pl-5 text-xs text-ochre-600">
                  {s.warnings.slice(0, 20).map((w: { feature?: number; message: string }, i: number) => (
                    <li key={i}>{w.feature !== undefined ? `Feature ${w.feature}: ` : ""}{w.message}</li>
                  ))}
                </ul>
              </div>
            )}
          </Card>
          <Card title="Versions">
            <ol className="space-y-1 text-sm">
              {dataset.versions.map((v) => (
                <li key={v.id} className="flex justify-between">
                  <span>v{v.version} · {v.fileName}</span>
                  <time className="text-ink-faint" dateTime={new Date(v.createdAt).toISOString()}>{new Date(v.createdAt).toLocaleString("en-GB")}</time>
                </li>
              ))}
            </ol>
          </Card>
        </div>
      </div>
    </>
  );
}

export function meta({ data }: Route.MetaArgs) {
  return [{ title: `${data?.dataset.name ?? "Dataset"} · Lissom` }];
}

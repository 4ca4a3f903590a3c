import { Form, Link, data, redirect, useNavigation } from "react-router";
import { listDatasets } from "../.server/datasets.server";
import { STEP_GUIDE, definitionJobs, getDefinition, runDefinition } from "../.server/definitions.server";
import { setNotice } from "../.server/flash.server";
import { requirePermission } from "../.server/guards.server";
import { can } from "../.server/permissions.server";
import { OUTPUT_FORMAT_LABELS } from "../.server/processes.server";
import { listSchedules } from "../.server/schedules.server";
import { Card, Notice, PageHeader, buttonClass, inputClass, quietButtonClass } from "../components/page";
import { StatusBadge } from "../components/status-badge";
import type { Route } from "./+types/definitions.detail";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requirePermission(request, { definition: ["read"] });
  const definition = await getDefinition(params.definitionId);
  if (!definition) throw data({ detail: "There is no definition with this id." }, { status: 404 });
  const canRun = can(user.role, { job: ["submit"] });
  const [jobs, schedules, datasets] = await Promise.all([
    definitionJobs(definition.name),
    can(user.role, { schedule: ["read"] }) ? listSchedules() : Promise.resolve([]),
    canRun ? listDatasets() : Promise.resolve([]),
  ]);
  return {
    definition,
    jobs,
    schedules: schedules.filter((s) => s.definitionName === definition.name),
    datasets: datasets.filter((d) => d.latest).map((d) => ({ id: d.id, name: d.name, version: d.latestVersion })),
    formatLabels: OUTPUT_FORMAT_LABELS as Record<string, string>,
    guide: STEP_GUIDE as Record<string, { title: string; params: Record<string, { label: string }> }>,
    may: { run: canRun, edit: can(user.role, { definition: ["write"] }), schedule: can(user.role, { schedule: ["write"] }) },
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requirePermission(request, { job: ["submit"] });
  const form = await request.formData();
  const number = (name: string) => {
    const text = String(form.get(name) ?? "").trim();
    return text === "" ? undefined : Number.isFinite(Number(text)) ? Number(text) : text;
  };
  const outcome = await runDefinition({
    definitionId: params.definitionId,
    run: { dataset: String(form.get("dataset") ?? ""), priority: number("priority") ?? 0, maxAttempts: number("maxAttempts") },
    userId: user.id,
  });
  if (!outcome.ok) {
    if (outcome.status === 404) throw data({ detail: outcome.message }, { status: 404 });
    return data({ error: outcome.message }, { status: outcome.status });
  }
  throw redirect(`/jobs/${outcome.job.id}`, { headers: await setNotice("Job accepted and queued.") });
}

function describeParams(labels: Record<string, { label: string }> | undefined, params: Record<string, unknown>): string {
  const parts = Object.entries(params).map(([k, v]) => `${labels?.[k]?.label ?? k}: ${String(v)}`);
  return parts.join(" · ") || "defaults";
}

export default function DefinitionPage({ loaderData, actionData }: Route.ComponentProps) {
  const { definition, jobs, schedules, datasets, formatLabels, guide, may } = loaderData;
  const busy = useNavigation().state === "submitting";
  const latest = definition.versions[0]!;
  const isLatest = latest.id === definition.id;
  return (
    <>
      <PageHeader
        title={definition.name}
        subtitle={
          <>
            Version {definition.version} of {definition.versions.length} · saved {new Date(definition.createdAt).toLocaleString("en-GB")}
            {definition.description && <span className="block">{definition.description}</span>}
          </>
        }
        actions={
          <>
            {may.schedule && (
              <Link to={`/schedules?definition=${definition.id}`} className={quietButtonClass}>
                Schedule
              </Link>
            )}
            {may.edit && (
              <Link to={`/definitions/${definition.id}/edit`} className={buttonClass}>
                Edit (new version)
              </Link>
            )}
          </>
        }
      />
      {!isLatest && (
        <Notice>
          This is an earlier version. The latest is{" "}
          <Link className="underline" to={`/definitions/${latest.id}`}>
            version {latest.version}
          </Link>
          .
        </Notice>
      )}
      <div className="grid gap-6 lg:grid-cols-[2fr_1fr]">
        <div className="space-y-6">
          <Card title="Steps">
            <ol className="space-y-2 text-sm">
              {definition.steps.map((s, i) => (
                <li key={i}>
                  <span className="font-medium">
                    {i + 1}. {guide[s.step]?.title ?? s.step}
                  </span>{" "}
                  <span className="text-ink-faint">({s.step})</span>
                  <p className="text-ink-soft">{describeParams(guide[s.step]?.params, s.params)}</p>
                </li>
              ))}
            </ol>
            <dl className="mt-4 grid grid-cols-[auto_1fr] gap-x-4 gap-y-1 text-sm">
              <dt className="text-ink-soft">Outputs</dt>
              <dd>{definition.formats.map((f) => formatLabels[f] ?? f).join(", ")}</dd>
              <dt className="text-ink-soft">Attempts</dt>
              <dd>
                {definition.maxAttempts}, first retry after {definition.backoffMs / 1000} s
              </dd>
            </dl>
          </Card>
          <Card title="Recent jobs">
            {jobs.length === 0 ? (
              <p className="text-sm text-ink-soft">No job has run this definition yet.</p>
            ) : (
              <table className="w-full text-sm">
                <thead className="text-left text-ink-soft">
                  <tr>
                    <th className="py-1 pr-3 font-medium">Job</th>
                    <th className="py-1 pr-3 font-medium">Version</th>
                    <th className="py-1 pr-3 font-medium">Dataset</th>
                    <th className="py-1 pr-3 font-medium">Status</th>
                    <th className="py-1 font-medium">Submitted</th>
                  </tr>
                </thead>
                <tbody>
                  {jobs.map((j) => (
                    <tr key={j.id} className="border-t border-rule">
                      <td className="py-1 pr-3">
                        <Link to={`/jobs/${j.id}`} className="font-mono text-xs text-tide-600 hover:underline">
                          {j.id.slice(0, 8)}
                        </Link>
                      </td>
                      <td className="py-1 pr-3 tabular-nums">v{j.definitionVersion}</td>
                      <td className="py-1 pr-3">
                        {j.datasetName} v{j.datasetVersion}
                      </td>
                      <td className="py-1 pr-3">
                        <StatusBadge status={j.status} />
                      </td>
                      <td className="py-1 text-ink-soft">
                        {new Date(j.createdAt).toLocaleString("en-GB")}
                        {j.scheduleId && " · scheduled"}
                      </td>
                    </tr>
                  ))}
                </tbody>
              </table>
            )}
          </Card>
        </div>
        <div className="space-y-6">
          {may.run && (
            <Card title="Run on a dataset">
              {actionData && "error" in actionData && <Notice tone="error">{actionData.error}</Notice>}
              {datasets.length === 0 ? (
                <p className="text-sm text-ink-soft">Upload a dataset first.</p>
              ) : (
                <Form method="post" className="space-y-3">
                  <label className="block text-sm font-medium">
                    Dataset (latest version)
                    <select name="dataset" className={`mt-1 ${inputClass}`}>
                      {datasets.map((d) => (
                        <option key={d.id} value={d.id}>
                          {d.name} v{d.version}
                        </option>
                      ))}
                    </select>
                  </label>
                  <div className="grid grid-cols-2 gap-3">
                    <label className="block text-sm font-medium">
                      Priority
                      <input name="priority" type="number" min="0" max="1000" step="1" defaultValue={0} className={`mt-1 ${inputClass}`} />
                    </label>
                    <label className="block text-sm font-medium">
                      Attempts
                      <input name="maxAttempts" type="number" min="1" max="10" step="1" defaultValue={definition.maxAttempts} className={`mt-1 ${inputClass}`} />
                    </label>
                  </div>
                  <p className="text-xs text-ink-faint">Priority 0 means none; among prioritised jobs, lower numbers start first.</p>
                  <button type="submit" className={`${buttonClass} w-full`} disabled={busy}>
                    {busy ? "Queuing…" : `Run version ${definition.version}`}
                  </button>
                </Form>
              )}
            </Card>
          )}
          <Card title="Versions">
            <ol className="space-y-1 text-sm">
              {definition.versions.map((v) => (
                <li key={v.id} className="flex justify-between gap-2">
                  {v.id === definition.id ? (
                    <span className="font-medium">v{v.version} (shown)</span>
                  ) : (
                    <Link to={`/definitions/${v.id}`} className="text-tide-600 hover:underline">
                      v{v.version}
                    </Link>
                  )}
                  <span className="text-ink-faint">
                    {new Date(v.createdAt).toLocaleDateString("en-GB")} · {v.createdByEmail ?? "unknown"}
                  </span>
                </li>
              ))}
            </ol>
          </Card>
          {schedules.length > 0 && (
            <Card title="Schedules">
              <ul className="space-y-1 text-sm">
                {schedules.map((s) => (
                  <li key={s.id}>
                    <Link to={`/schedules/${s.id}`} className="text-tide-600 hover:underline">
                      {s.datasetName}
                    </Link>{" "}
                    · v{s.definitionVersion} · <code className="text-xs">{s.cron}</code> {s.timezone}
                    {s.paused && <span className="ml-1 text-ochre-600">paused</span>}
                  </li>
                ))}
              </ul>
            </Card>
          )}
        </div>
      </div>
    </>
  );
}

export function meta({ data }: Route.MetaArgs) {
  return [{ title: `${data?.definition.name ?? "Definition"} · Lissom` }];
}

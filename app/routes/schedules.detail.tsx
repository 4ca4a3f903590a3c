import { Form, Link, data, redirect, useNavigation } from "react-router";
import { listDatasets } from "../.server/datasets.server";
import { definitionChoices } from "../.server/definitions.server";
import { setNotice } from "../.server/flash.server";
import { requirePermission } from "../.server/guards.server";
import { can } from "../.server/permissions.server";
import { deleteSchedule, getSchedule, setSchedulePaused, timezoneNames, updateSchedule } from "../.server/schedules.server";
import { Card, Notice, PageHeader, buttonClass, quietButtonClass } from "../components/page";
import { ScheduleFields, when } from "../components/schedule-fields";
import { StatusBadge } from "../components/status-badge";
import type { Route } from "./+types/schedules.detail";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requirePermission(request, { schedule: ["read"] });
  const schedule = await getSchedule(params.scheduleId);
  if (!schedule) throw data({ detail: "There is no schedule with this id." }, { status: 404 });
  const canWrite = can(user.role, { schedule: ["write"] });
  let definitions: { id: string; name: string; version: number }[] = [];
  let datasets: { id: string; name: string }[] = [];
  if (canWrite) {
    definitions = await definitionChoices(schedule.definitionName);
    datasets = (await listDatasets()).filter((d) => d.latest).map((d) => ({ id: d.id, name: d.name }));
  }
  return {
    schedule,
    definitions,
    datasets,
    timezones: canWrite ? timezoneNames() : [],
    may: { write: canWrite, pause: can(user.role, { schedule: ["pause"] }) },
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const form = await request.formData();
  const intent = String(form.get("intent") ?? "");
  const here = `/schedules/${params.scheduleId}`;
  if (intent === "pause" || intent === "resume") {
    await requirePermission(request, { schedule: ["pause"] });
    const outcome = await setSchedulePaused(params.scheduleId, intent === "pause");
    if (!outcome) throw data({ detail: "There is no schedule with this id." }, { status: 404 });
    if (!outcome.ok) return data({ error: outcome.message }, { status: outcome.status });
    throw redirect(here, { headers: await setNotice(intent === "pause" ? "Schedule paused: it submits nothing until resumed." : "Schedule resumed.") });
  }
  await requirePermission(request, { schedule: ["write"] });
  if (intent === "delete") {
    const outcome = await deleteSchedule(params.scheduleId);
    if (!outcome) throw data({ detail: "There is no schedule with this id." }, { status: 404 });
    if (!outcome.ok) return data({ error: outcome.message }, { status: outcome.status });
    throw redirect("/schedules", { headers: await setNotice("Schedule deleted; the jobs it ran stay.") });
  }
  const outcome = await updateSchedule(params.scheduleId, {
    definition: String(form.get("definition") ?? ""),
    dataset: String(form.get("dataset") ?? ""),
    cron: String(form.get("cron") ?? ""),
    timezone: String(form.get("timezone") ?? "").trim() || "UTC",
  });
  if (!outcome) throw data({ detail: "There is no schedule with this id." }, { status: 404 });
  if (!outcome.ok) return data({ error: outcome.message }, { status: outcome.status });
  throw redirect(here, { headers: await setNotice("Schedule saved.") });
}

export default function SchedulePage({ loaderData, actionData }: Route.ComponentProps) {
  const { schedule: s, definitions, datasets, timezones, may } = loaderData;
  const busy = useNavigation().state === "submitting";
  return (
    <>
      <PageHeader
        title={`${s.definitionName} on ${s.datasetName}`}
        subtitle={
          <>
            <code>{s.cron}</code> in {s.timezone} · definition version {s.definitionVersion} · {s.paused ? "paused" : "active"}
          </>
        }
        actions={
          may.pause && (
            <Form method="post">
              <button name="intent" value={s.paused ? "resume" : "pause"} className={s.paused ? buttonClass : quietButtonClass} disabled={busy}>
                {s.paused ? "Resume" : "Pause"}
              </button>
            </Form>
          )
        }
      />
      {actionData && "error" in actionData && <Notice tone="error">{actionData.error}</Notice>}
      {s.newerDefinitionId && (
        <Notice>
          This schedule runs version {s.definitionVersion};{" "}
          <Link className="underline" to={`/definitions/${s.newerDefinitionId.id}`}>
            version {s.newerDefinitionId.version}
          </Link>{" "}
          exists. {may.write ? "Choose it below to switch." : ""}
        </Notice>
      )}
      <div className="grid gap-6 lg:grid-cols-[2fr_1fr]">
        <div className="space-y-6">
          <Card title="Last runs">
            {s.runs.length === 0 ? (
              <p className="text-sm text-ink-soft">No run yet.</p>
            ) : (
              <table className="w-full text-sm">
                <thead className="text-left text-ink-soft">
                  <tr>
                    <th className="py-1 pr-3 font-medium">Job</th>
                    <th className="py-1 pr-3 font-medium">Dataset version</th>
                    <th className="py-1 pr-3 font-medium">Status</th>
                    <th className="py-1 pr-3 font-medium">Started</th>
                    <th className="py-1 font-medium">Finished</th>
                  </tr>
                </thead>
                <tbody>
                  {s.runs.map((r) => (
                    <tr key={r.id} className="border-t border-rule">
                      <td className="py-1 pr-3">
                        <Link to={`/jobs/${r.id}`} className="font-mono text-xs text-tide-600 hover:underline">
                          {r.id.slice(0, 8)}
                        </Link>
                      </td>
                      <td className="py-1 pr-3 tabular-nums">v{r.datasetVersion}</td>
                      <td className="py-1 pr-3">
                        <StatusBadge status={r.status} />
                      </td>
                      <td className="py-1 pr-3 text-ink-soft">{when(r.createdAt, s.timezone)}</td>
                      <td className="py-1 text-ink-soft">{when(r.finishedAt, s.timezone)}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            )}
          </Card>
          {may.write && (
            <Card title="Change">
              <ScheduleFields
                definitions={definitions}
                datasets={datasets}
                timezones={timezones}
                initial={{ definition: s.definitionId, dataset: s.datasetId, cron: s.cron, timezone: s.timezone }}
                busy={busy}
                submitLabel="Save changes"
                withPaused={false}
              />
            </Card>
          )}
        </div>
        <div className="space-y-6">
          <Card title="Next runs">
            {s.paused ? (
              <p className="text-sm text-ochre-600">Paused: nothing runs until it is resumed.</p>
            ) : (
              <ol className="space-y-1 text-sm tabular-nums" data-testid="upcoming">
                {s.upcoming.map((t) => (
                  <li key={String(t)}>{when(t, s.timezone)}</li>
                ))}
              </ol>
            )}
            <p className="mt-3 text-xs text-ink-faint">
              Times in {s.timezone}. A run is skipped while the previous run of this schedule is still waiting or running.
            </p>
          </Card>
          <Card title="About">
            <dl className="grid grid-cols-[auto_1fr] gap-x-4 gap-y-1 text-sm">
              <dt className="text-ink-soft">Definition</dt>
              <dd>
                <Link to={`/definitions/${s.definitionId}`} className="text-tide-600 hover:underline">
                  {s.definitionName} v{s.definitionVersion}
                </Link>
              </dd>
              <dt className="text-ink-soft">Dataset</dt>
              <dd>
                <Link to={`/datasets/${s.datasetId}`} className="text-tide-600 hover:underline">
                  {s.datasetName}
                </Link>{" "}
                (now v{s.datasetLatestVersion})
              </dd>
              <dt className="text-ink-soft">Last run</dt>
              <dd>{when(s.lastRunAt, s.timezone)}</dd>
            </dl>
            {may.write && (
              <Form method="post" className="mt-4" onSubmit={(e) => !confirm("Delete this schedule? The jobs it ran stay.") && e.preventDefault()}>
                <button name="intent" value="delete" className={quietButtonClass}>
                  Delete schedule
                </button>
              </Form>
            )}
          </Card>
        </div>
      </div>
    </>
  );
}

export function meta({ data }: Route.MetaArgs) {
  return [{ title: `Schedule: ${data?.schedule.definitionName ?? ""} · Lissom` }];
}

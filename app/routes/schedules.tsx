import { Form, Link, data, redirect, useNavigation } from "react-router";
import { listDatasets } from "../.server/datasets.server";
import { listDefinitions } from "../.server/definitions.server";
import { setNotice } from "../.server/flash.server";
import { requirePermission } from "../.server/guards.server";
import { can } from "../.server/permissions.server";
import { createSchedule, listSchedules, nextRuns, setSchedulePaused, timezoneNames } from "../.server/schedules.server";
import { ListTable } from "../components/list-table";
import { Card, EmptyState, Notice, PageHeader, quietButtonClass } from "../components/page";
import { ScheduleFields, when } from "../components/schedule-fields";
import { StatusBadge } from "../components/status-badge";
import type { Route } from "./+types/schedules";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requirePermission(request, { schedule: ["read"] });
  const canWrite = can(user.role, { schedule: ["write"] });
  const [schedules, definitions, datasets] = await Promise.all([
    listSchedules(),
    canWrite ? listDefinitions() : Promise.resolve([]),
    canWrite ? listDatasets() : Promise.resolve([]),
  ]);
  return {
    schedules,
    definitions: definitions.map((d) => ({ id: d.id, name: d.name, version: d.version })),
    datasets: datasets.filter((d) => d.latest).map((d) => ({ id: d.id, name: d.name })),
    timezones: canWrite ? timezoneNames() : [],
    chosenDefinition: new URL(request.url).searchParams.get("definition"),
    may: { write: canWrite, pause: can(user.role, { schedule: ["pause"] }) },
  };
}

export async function action({ request }: Route.ActionArgs) {
  const form = await request.formData();
  const intent = String(form.get("intent") ?? "");
  if (intent === "check") {
    await requirePermission(request, { schedule: ["read"] });
    const r = nextRuns(String(form.get("cron") ?? ""), String(form.get("timezone") ?? "UTC").trim() || "UTC", 3);
    return { check: r.ok ? { ok: true as const, times: r.times.map((t) => t.toISOString()) } : { ok: false as const, message: r.message } };
  }
  if (intent === "pause" || intent === "resume") {
    await requirePermission(request, { schedule: ["pause"] });
    const outcome = await setSchedulePaused(String(form.get("scheduleId") ?? ""), intent === "pause");
    if (!outcome) throw data({ detail: "There is no schedule with this id." }, { status: 404 });
    if (!outcome.ok) return data({ error: outcome.message }, { status: outcome.status });
    throw redirect("/schedules", { headers: await setNotice(intent === "pause" ? "Schedule paused: it submits nothing until resumed." : "Schedule resumed.") });
  }
  const user = await requirePermission(request, { schedule: ["write"] });
  const outcome = await createSchedule(
    {
      definition: String(form.get("definition") ?? ""),
      dataset: String(form.get("dataset") ?? ""),
      cron: String(form.get("cron") ?? ""),
      timezone: String(form.get("timezone") ?? "").trim() || "UTC",
      paused: form.get("paused") === "on",
    },
    user.id,
  );
  if (!outcome.ok) return data({ error: outcome.message }, { status: outcome.status });
  throw redirect(`/schedules/${outcome.schedule.id}`, { headers: await setNotice("Schedule saved.") });
}

export default function Schedules({ loaderData, actionData }: Route.ComponentProps) {
  const { schedules, definitions, datasets, timezones, chosenDefinition, may } = loaderData;
  const busy = useNavigation().state === "submitting";
  const error = actionData && "error" in actionData ? actionData.error : undefined;
  return (
    <>
      <PageHeader title="Schedules" subtitle="Each schedule runs a definition on the latest version of a dataset at the times its cron expression names." />
      {error && <Notice tone="error">{error}</Notice>}
      {schedules.length === 0 ? (
        <EmptyState title="No schedules yet">{may.write ? "Add one below." : "Engineers set up schedules; they will appear here."}</EmptyState>
      ) : (
        <ListTable columns={[{ label: "Definition" }, { label: "Dataset" }, { label: "When" }, { label: "Next run" }, { label: "Last run" }, { label: "" }]}>
          {schedules.map((s) => (
            <tr key={s.id} className="border-t border-rule">
              <td className="px-4 py-2">
                <Link to={`/schedules/${s.id}`} className="font-medium text-tide-600 hover:underline">
                  {s.definitionName} v{s.definitionVersion}
                </Link>
                {s.newerDefinitionId && <p className="text-xs text-ochre-600">a newer version exists</p>}
              </td>
              <td className="px-4 py-2">{s.datasetName}</td>
              <td className="px-4 py-2">
                <code className="text-xs">{s.cron}</code> <span className="text-ink-soft">{s.timezone}</span>
              </td>
              <td className="px-4 py-2" data-testid="next-run">
                {s.paused ? <span className="text-ochre-600">paused</span> : when(s.nextRunAt, s.timezone)}
              </td>
              <td className="px-4 py-2">
                {s.lastJob ? (
                  <Link to={`/jobs/${s.lastJob.id}`} className="hover:underline">
                    <StatusBadge status={s.lastJob.status} /> <span className="text-ink-soft">{when(s.lastJob.createdAt, s.timezone)}</span>
                  </Link>
                ) : (
                  <span className="text-ink-faint">never</span>
                )}
              </td>
              <td className="px-4 py-2 text-right">
                {may.pause && (
                  <Form method="post">
                    <input type="hidden" name="scheduleId" value={s.id} />
                    <button name="intent" value={s.paused ? "resume" : "pause"} className={quietButtonClass} disabled={busy}>
                      {s.paused ? "Resume" : "Pause"}
                    </button>
                  </Form>
                )}
              </td>
            </tr>
          ))}
        </ListTable>
      )}
      {may.write && (
        <Card title="New schedule" className="mt-6">
          {definitions.length === 0 || datasets.length === 0 ? (
            <p className="text-sm text-ink-soft">A schedule needs a definition and a dataset; write or upload those first.</p>
          ) : (
            <ScheduleFields definitions={definitions} datasets={datasets} timezones={timezones} initial={{ definition: chosenDefinition ?? undefined }} busy={busy} submitLabel="Save schedule" />
          )}
        </Card>
      )}
    </>
  );
}

export function meta() {
  return [{ title: "Schedules · Lissom" }];
}

import { useEffect } from "react";
import { Form, Link, data, redirect, useNavigation, useRevalidator } from "react-router";
import { z } from "zod";
import { QueueUnavailableError } from "../../jobs/queue";
import { setNotice } from "../.server/flash.server";
import { requirePermission } from "../.server/guards.server";
import { JobStateError, retryJob } from "../.server/jobs.server";
import { board } from "../.server/overview.server";
import { can } from "../.server/permissions.server";
import { Card, Notice, PageHeader, quietButtonClass } from "../components/page";
import { ProgressBar } from "../components/progress-bar";
import { when } from "../components/schedule-fields";
import { StatusBadge } from "../components/status-badge";
import { ThroughputChart } from "../components/throughput-chart";
import type { Route } from "./+types/overview";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requirePermission(request, { job: ["read"] });
  const b = await board();
  return {
    ...b,
    hourly: b.hourly.map((h) => ({ ...h, start: h.start.toISOString() })),
    may: { retry: can(user.role, { job: ["retry"] }), dismiss: can(user.role, { job: ["cancel"] }), schedules: can(user.role, { schedule: ["read"] }) },
  };
}

const RetryForm = z.object({ intent: z.literal("retry"), jobId: z.string().min(1) });

export async function action({ request }: Route.ActionArgs) {
  const user = await requirePermission(request, { job: ["retry"] });
  const parsed = RetryForm.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return data({ error: "Unknown action." }, { status: 400 });
  try {
    const job = await retryJob(parsed.data.jobId, user.email);
    if (!job) throw data({ detail: "There is no job with this id." }, { status: 404 });
    throw redirect("/overview", { headers: await setNotice(`Job ${job.id.slice(0, 8)} queued again as a new attempt.`) });
  } catch (error) {
    if (error instanceof JobStateError) return data({ error: error.message }, { status: 409 });
    if (error instanceof QueueUnavailableError) return data({ error: error.message }, { status: 503 });
    throw error;
  }
}

function age(from: Date | string, now: Date | string): string {
  const s = Math.max(0, Math.round((new Date(now).getTime() - new Date(from).getTime()) / 1000));
  if (s < 90) return `${s} s`;
  if (s < 90 * 60) return `${Math.round(s / 60)} min`;
  if (s < 36 * 3600) return `${(s / 3600).toFixed(1)} h`;
  return `${(s / 86400).toFixed(1)} days`;
}

export default function Overview({ loaderData, actionData }: Route.ComponentProps) {
  const { counts, hourly, hours, oldest, failures, running, upcoming, pausedSchedules, now, may } = loaderData;
  const revalidator = useRevalidator();
  const busy = useNavigation().state === "submitting";
  useEffect(() => {
    const timer = setInterval(() => revalidator.state === "idle" && document.visibilityState === "visible" && revalidator.revalidate(), 5000);
    return () => clearInterval(timer);
  }, [revalidator]);
  const finished = hourly.reduce((a, h) => a + h.successful + h.failed, 0);
  const features = hourly.reduce((a, h) => a + h.features, 0);
  return (
    <>
      <PageHeader title="Overview" subtitle="What is waiting, what is running, what failed and needs someone." />
      {actionData && "error" in actionData && <Notice tone="error">{actionData.error}</Notice>}
      <ul className="mb-6 grid grid-cols-2 gap-3 sm:grid-cols-5" aria-label="Jobs by status">
        {(Object.keys(counts) as (keyof typeof counts)[]).map((status) => (
          <li key={status} className="rounded-card border border-rule bg-card p-3">
            <Link to="/jobs" className="block">
              <StatusBadge status={status} />
              <p className="mt-2 text-2xl font-semibold tabular-nums" data-testid={`count-${status}`}>
                {counts[status]}
              </p>
            </Link>
          </li>
        ))}
      </ul>
      <div className="grid gap-6 lg:grid-cols-[2fr_1fr]">
        <div className="space-y-6">
          <Card title={`Failures needing action (${failures.length}${failures.length === 20 ? "+" : ""})`}>
            {failures.length === 0 ? (
              <p className="text-sm text-ink-soft">No failed job is waiting for a decision.</p>
            ) : (
              <ul className="divide-y divide-rule">
                {failures.map((j) => (
                  <li key={j.id} className="flex flex-wrap items-start gap-3 py-2 text-sm">
                    <div className="min-w-0 flex-1">
                      <Link to={`/jobs/${j.id}`} className="font-mono text-xs text-tide-600 hover:underline">
                        {j.id.slice(0, 8)}
                      </Link>{" "}
                      {j.processId} on {j.datasetName} v{j.datasetVersion}
                      {j.scheduleId && <span className="text-ink-faint"> · scheduled</span>}
                      <p className="truncate text-xs text-clay-600" title={j.message ?? undefined}>
                        {j.message ?? "No reason recorded."}
                      </p>
                      <p className="text-xs text-ink-faint">failed {j.finishedAt ? `${age(j.finishedAt, now)} ago` : ""}</p>
                    </div>
                    {may.retry && (
                      <Form method="post">
                        <input type="hidden" name="jobId" value={j.id} />
                        <button name="intent" value="retry" className={quietButtonClass} disabled={busy}>
                          Retry
                        </button>
                      </Form>
                    )}
                  </li>
                ))}
              </ul>
            )}
          </Card>
          <Card title={`Throughput, last ${hours} hours`}>
            <p className="mb-2 text-sm text-ink-soft">
              {finished} jobs finished, {features.toLocaleString("en-GB")} features written.
            </p>
            <ThroughputChart hours={hourly} />
          </Card>
          <Card title="Running now">
            {running.length === 0 ? (
              <p className="text-sm text-ink-soft">Nothing is running.</p>
            ) : (
              <ul className="space-y-3">
                {running.map((j) => (
                  <li key={j.id} className="text-sm">
                    <div className="flex justify-between gap-2">
                      <span>
                        <Link to={`/jobs/${j.id}`} className="font-mono text-xs text-tide-600 hover:underline">
                          {j.id.slice(0, 8)}
                        </Link>{" "}
                        {j.processId} on {j.datasetName} v{j.datasetVersion}
                      </span>
                      <span className="text-xs text-ink-faint tabular-nums">
                        {j.featuresDone}/{j.featuresTotal ?? "?"} · {j.startedAt ? age(j.startedAt, now) : ""}
                      </span>
                    </div>
                    <ProgressBar value={j.progress} label={`Progress of job ${j.id.slice(0, 8)}`} />
                  </li>
                ))}
              </ul>
            )}
            {may.dismiss && running.length > 0 && <p className="mt-3 text-xs text-ink-faint">Open a job to dismiss it; it stops between features.</p>}
          </Card>
        </div>
        <div className="space-y-6">
          <Card title="Oldest waiting job">
            {oldest ? (
              <div className="text-sm" data-testid="oldest-waiting">
                <p className="text-2xl font-semibold tabular-nums">{age(oldest.createdAt, now)}</p>
                <p className="mt-1">
                  <Link to={`/jobs/${oldest.id}`} className="font-mono text-xs text-tide-600 hover:underline">
                    {oldest.id.slice(0, 8)}
                  </Link>{" "}
                  {oldest.processId} on {oldest.datasetName} v{oldest.datasetVersion}
                </p>
                {oldest.message && <p className="text-xs text-ink-soft">{oldest.message}</p>}
              </div>
            ) : (
              <p className="text-sm text-ink-soft">No job is waiting.</p>
            )}
          </Card>
          {may.schedules && (
            <Card title="Coming up">
              {upcoming.length === 0 ? (
                <p className="text-sm text-ink-soft">No active schedule.</p>
              ) : (
                <ul className="space-y-1 text-sm">
                  {upcoming.map((s) => (
                    <li key={s.id}>
                      <Link to={`/schedules/${s.id}`} className="text-tide-600 hover:underline">
                        {s.definitionName}
                      </Link>{" "}
                      on {s.datasetName}
                      <span className="block text-xs text-ink-faint">
                        {when(s.nextRunAt, s.timezone)} ({s.timezone})
                      </span>
                    </li>
                  ))}
                </ul>
              )}
              {pausedSchedules > 0 && (
                <p className="mt-2 text-xs text-ochre-600">
                  {pausedSchedules} paused schedule{pausedSchedules === 1 ? "" : "s"}.
                </p>
              )}
            </Card>
          )}
        </div>
      </div>
    </>
  );
}

export function meta() {
  return [{ title: "Overview · Lissom" }];
}

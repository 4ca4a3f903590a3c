import { useEffect, useMemo, useRef, useState } from "react";
import { Form, Link, data, redirect, useFetcher, useRevalidator } from "react-router";
import { z } from "zod";
import { QueueUnavailableError } from "../../jobs/queue";
import { setNotice } from "../.server/flash.server";
import { requirePermission } from "../.server/guards.server";
import { JobStateError, dismissJob, getJob, jobAttempts, jobChunks, jobFeatureReports, jobLogEntries, jobOutputs, retryFailedChunks, retryJob } from "../.server/jobs.server";
import { publishOutput } from "../.server/outputs.server";
import { can } from "../.server/permissions.server";
import { Caution } from "../components/caution";
import { Card, Notice, PageHeader, buttonClass, quietButtonClass } from "../components/page";
import { ProgressBar } from "../components/progress-bar";
import { StatusBadge } from "../components/status-badge";
import type { Route } from "./+types/job";

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requirePermission(request, { job: ["read"] });
  const job = await getJob(params.jobId);
  if (!job) throw data({ detail: "There is no job with this id." }, { status: 404 });
  const [attempts, log, reports, outputs, chunks] = await Promise.all([jobAttempts(job.id), jobLogEntries(job.id), jobFeatureReports(job.id), jobOutputs(job.id), jobChunks(job.id)]);
  return {
    job,
    attempts,
    log,
    reports,
    outputs,
    chunks,
    may: {
      dismiss: can(user.role, { job: ["cancel"] }),
      retry: can(user.role, { job: ["retry"] }),
      publish: can(user.role, { output: ["publish"] }),
    },
  };
}

const Intent = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("dismiss") }),
  z.object({ intent: z.literal("retry") }),
  z.object({ intent: z.literal("retry-chunks") }),
  z.object({ intent: z.literal("publish"), outputId: z.string().min(1) }),
  z.object({ intent: z.literal("unpublish"), outputId: z.string().min(1) }),
]);

export async function action({ request, params }: Route.ActionArgs) {
  const parsed = Intent.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return data({ error: "Unknown action." }, { status: 400 });
  const form = parsed.data;
  const here = `/jobs/${params.jobId}`;
  try {
    if (form.intent === "dismiss") {
      const user = await requirePermission(request, { job: ["cancel"] });
      if (!(await dismissJob(params.jobId, user.email))) throw data({ detail: "No such job." }, { status: 404 });
      throw redirect(here, { headers: await setNotice("Job dismissed.") });
    }
    if (form.intent === "retry") {
      const user = await requirePermission(request, { job: ["retry"] });
      if (!(await retryJob(params.jobId, user.email))) throw data({ detail: "No such job." }, { status: 404 });
      throw redirect(here, { headers: await setNotice("Job queued again as a new attempt.") });
    }
    if (form.intent === "retry-chunks") {
      const user = await requirePermission(request, { job: ["retry"] });
      if (!(await retryFailedChunks(params.jobId, user.email))) throw data({ detail: "No such job." }, { status: 404 });
      throw redirect(here, { headers: await setNotice("The failed chunks are queued again; the job is merged once they finish.") });
    }
    const user = await requirePermission(request, { output: ["publish"] });
    const publish = form.intent === "publish";
    if (!(await publishOutput(form.outputId, user.id, publish))) throw data({ detail: "No such output." }, { status: 404 });
    throw redirect(here, { headers: await setNotice(publish ? "Output published: consumers can now download it." : "Output withdrawn from the library.") });
  } catch (error) {
    if (error instanceof JobStateError) return data({ error: error.message }, { status: 409 });
    if (error instanceof QueueUnavailableError) return data({ error: error.message }, { status: 503 });
    throw error;
  }
}

type LiveLine = { id: number; time: string; level: string; message: string; featureIndex: number | null };
type Live = { status: string; progress: number; featuresDone: number; featuresTotal: number | null; message: string | null; log: LiveLine[] };

export default function JobPage({ loaderData, actionData }: Route.ComponentProps) {
  const { job, attempts, reports, outputs, chunks, may } = loaderData;
  const unfinishedChunks = chunks.filter((c) => c.status !== "successful").length;
  const fetcher = useFetcher<Live>();
  const revalidator = useRevalidator();
  const [extraLog, setExtraLog] = useState<LiveLine[]>([]);
  const baseLog = useMemo(() => loaderData.log.map((l) => ({ ...l, time: new Date(l.time).toISOString() })), [loaderData.log]);
  const lastId = Math.max(0, ...baseLog.map((l) => l.id), ...extraLog.map((l) => l.id));
  const live = fetcher.data;
  const status = live?.status ?? job.status;
  const progress = live?.progress ?? job.progress;
  const active = status === "accepted" || status === "running";
  const lastSeen = useRef<string>(job.status);

  useEffect(() => setExtraLog([]), [loaderData.log]);
  useEffect(() => {
    if (!active) return;
    const timer = setInterval(() => {
      if (fetcher.state === "idle") fetcher.load(`/jobs/${job.id}/live?after=${lastId}`);
    }, 1000);
    return () => clearInterval(timer);
  }, [active, fetcher, job.id, lastId]);
  useEffect(() => {
    if (!live) return;
    if (live.log.length) setExtraLog((prev) => [...prev, ...live.log.filter((l) => !prev.some((p) => p.id === l.id) && !baseLog.some((p) => p.id === l.id))]);
    // When the job finishes, load the page again for its outputs and reports.
    if (live.status !== lastSeen.current && !(live.status === "accepted" || live.status === "running")) revalidator.revalidate();
    lastSeen.current = live.status;
  }, [live]);

  const log = [...baseLog, ...extraLog];
  return (
    <>
      <PageHeader
        title={`Job ${job.id.slice(0, 8)}`}
        subtitle={
          <>
            {job.processId} on <Link className="text-tide-600 hover:underline" to={`/datasets/${job.datasetId}`}>{job.datasetName} v{job.datasetVersion}</Link> · submitted by {job.submittedByEmail ?? "unknown"}
          </>
        }
        actions={
          <>
            {may.dismiss && active && (
              <Form method="post">
                <button name="intent" value="dismiss" className={quietButtonClass}>Dismiss</button>
              </Form>
            )}
            {may.retry && (status === "failed" || status === "dismissed") && unfinishedChunks > 0 && (
              <Form method="post">
                <button name="intent" value="retry-chunks" className={buttonClass}>
                  Retry failed chunks ({unfinishedChunks})
                </button>
              </Form>
            )}
            {may.retry && (status === "failed" || status === "dismissed") && (
              <Form method="post">
                <button name="intent" value="retry" className={unfinishedChunks > 0 ? quietButtonClass : buttonClass}>
                  {chunks.length > 0 ? "Retry whole job" : "Retry"}
                </button>
              </Form>
            )}
          </>
        }
      />
      {actionData && "error" in actionData && <Notice tone="error">{actionData.error}</Notice>}
      <div className="grid gap-6 lg:grid-cols-[2fr_1fr]">
        <div className="space-y-6">
          <Card>
            <div className="flex items-center justify-between">
              <span data-testid="job-status"><StatusBadge status={status} /></span>
              <span className="text-sm text-ink-soft tabular-nums">
                {(live?.featuresDone ?? job.featuresDone).toLocaleString()} / {(live?.featuresTotal ?? job.featuresTotal)?.toLocaleString() ?? "?"} features
              </span>
            </div>
            <div className="mt-3">
              <ProgressBar value={progress} label="Job progress" />
            </div>
            {(live?.message ?? job.message) && <p className="mt-3 text-sm text-ink-soft">{live?.message ?? job.message}</p>}
          </Card>
          {chunks.length > 0 && (
            <Card title={`Chunks (${chunks.length})`}>
              <p className="mb-2 text-xs text-ink-soft">This dataset was cut into chunks that run as separate queue entries, so several workers share it; the outputs are merged in input order.</p>
              <div className="max-h-72 overflow-y-auto">
                <table className="w-full text-sm" data-testid="job-chunks">
                  <thead className="sticky top-0 bg-card text-left text-ink-soft">
                    <tr>
                      <th className="py-1 pr-3 font-medium">#</th>
                      <th className="py-1 pr-3 font-medium">Features</th>
                      <th className="py-1 pr-3 font-medium">Progress</th>
                      <th className="py-1 pr-3 text-right font-medium">Attempts</th>
                      <th className="py-1 font-medium">Status</th>
                    </tr>
                  </thead>
                  <tbody>
                    {chunks.map((c) => (
                      <tr key={c.id} className="border-t border-rule align-top">
                        <td className="py-1 pr-3 tabular-nums">{c.index + 1}</td>
                        <td className="py-1 pr-3 tabular-nums">
                          {c.featureStart}–{c.featureEnd - 1}
                        </td>
                        <td className="py-1 pr-3 tabular-nums">
                          {c.featuresDone.toLocaleString()} / {c.featuresTotal?.toLocaleString() ?? "?"}
                        </td>
                        <td className="py-1 pr-3 text-right tabular-nums">{c.attempts}</td>
                        <td className="py-1">
                          <StatusBadge status={c.status} /> {c.status !== "successful" && c.message && <span className="text-xs text-ink-soft">{c.message}</span>}
                        </td>
                      </tr>
                    ))}
                  </tbody>
                </table>
              </div>
            </Card>
          )}
          <Card title="Log">
            <ol className="max-h-80 space-y-0.5 overflow-y-auto font-mono text-xs" aria-live="polite">
              {log.length === 0 && <li className="text-ink-faint">No entries yet.</li>}
              {log.map((l) => (
                <li key={l.id} className={l.level === "error" ? "text-clay-600" : l.level === "warn" ? "text-ochre-600" : ""}>
                  <time className="text-ink-faint">{l.time.slice(11, 19)}</time> {l.level.padEnd(5)} {l.featureIndex !== null ? `[feature ${l.featureIndex}] ` : ""}
                  {l.message}
                </li>
              ))}
            </ol>
          </Card>
          {reports.length > 0 && (
            <Card title="Feature reports">
              <div className="max-h-96 overflow-y-auto">
                <table className="w-full text-sm">
                  <thead className="sticky top-0 bg-card text-left text-ink-soft">
                    <tr>
                      <th className="py-1 pr-3 font-medium">#</th>
                      <th className="py-1 pr-3 text-right font-medium">Vertices in</th>
                      <th className="py-1 pr-3 text-right font-medium">Segments out</th>
                      <th className="py-1 pr-3 text-right font-medium">Max dev. (m)</th>
                      <th className="py-1 pr-3 text-right font-medium">RMS dev. (m)</th>
                      <th className="py-1 font-medium">Status</th>
                    </tr>
                  </thead>
                  <tbody>
                    {reports.map((r) => (
                      <tr key={r.id} className="border-t border-rule">
                        <td className="py-1 pr-3 tabular-nums">{r.featureIndex}</td>
                        <td className="py-1 pr-3 text-right tabular-nums">{r.verticesIn}</td>
                        <td className="py-1 pr-3 text-right tabular-nums">{r.segmentsOut}</td>
                        <td className="py-1 pr-3 text-right tabular-nums">{r.maxDeviation >= 0 ? r.maxDeviation.toFixed(2) : "–"}</td>
                        <td className="py-1 pr-3 text-right tabular-nums">{r.rmsDeviation >= 0 ? r.rmsDeviation.toFixed(2) : "–"}</td>
                        <td className="py-1">
                          <StatusBadge status={r.status} /> <span className="text-xs text-ink-soft">{r.reason}</span>
                        </td>
                      </tr>
                    ))}
                  </tbody>
                </table>
              </div>
            </Card>
          )}
        </div>
        <div className="space-y-6">
          <Card title="Output">
            {outputs.length === 0 ? (
              <p className="text-sm text-ink-soft">{active ? "The output appears here when the job succeeds." : "This job produced no output."}</p>
            ) : (
              <ul className="space-y-3">
                {outputs.map((o) => (
                  <li key={o.id} className="text-sm">
                    <p className="break-all font-medium">{o.fileName}</p>
                    <p className="text-xs text-ink-faint">{(o.sizeBytes / 1024).toFixed(1)} KiB · {o.published ? "published" : "not published"}</p>
                    <div className="mt-2 flex gap-2">
                      <a href={`/outputs/${o.id}/download`} className={buttonClass} download>
                        Download
                      </a>
                      {may.publish && (
                        <Form method="post">
                          <input type="hidden" name="outputId" value={o.id} />
                          <button name="intent" value={o.published ? "unpublish" : "publish"} className={quietButtonClass}>
                            {o.published ? "Withdraw" : "Publish"}
                          </button>
                        </Form>
                      )}
                    </div>
                  </li>
                ))}
              </ul>
            )}
            <div className="mt-4">
              <Caution compact />
            </div>
          </Card>
          <Card title="Parameters">
            <pre className="overflow-x-auto text-xs">{JSON.stringify(job.steps, null, 2)}</pre>
          </Card>
          <Card title="Attempts">
            {attempts.length === 0 ? (
              <p className="text-sm text-ink-soft">Not started yet.</p>
            ) : (
              <ol className="space-y-1 text-sm">
                {attempts.map((a) => (
                  <li key={a.id}>
                    #{a.number} <StatusBadge status={a.status === "running" ? "running" : a.status} /> {a.error && <span className="text-xs text-clay-600">{a.error}</span>}
                  </li>
                ))}
              </ol>
            )}
          </Card>
        </div>
      </div>
    </>
  );
}

export function meta({ data }: Route.MetaArgs) {
  return [{ title: `Job ${data?.job.id.slice(0, 8) ?? ""} · Lissom` }];
}

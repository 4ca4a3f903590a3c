import { useEffect } from "react";
import { Link, useRevalidator } from "react-router";
import { requirePermission } from "../.server/guards.server";
import { countJobsByStatus, listJobs } from "../.server/jobs.server";
import { ListTable } from "../components/list-table";
import { EmptyState, PageHeader } from "../components/page";
import { ProgressBar } from "../components/progress-bar";
import { StatusBadge } from "../components/status-badge";
import type { Route } from "./+types/jobs";

export async function loader({ request }: Route.LoaderArgs) {
  await requirePermission(request, { job: ["read"] });
  const [jobs, counts] = await Promise.all([listJobs({ limit: 100 }), countJobsByStatus()]);
  return { jobs, counts };
}

export default function Jobs({ loaderData }: Route.ComponentProps) {
  const { jobs, counts } = loaderData;
  const revalidator = useRevalidator();
  const active = counts.accepted + counts.running > 0;
  useEffect(() => {
    if (!active) return;
    const timer = setInterval(() => revalidator.state === "idle" && revalidator.revalidate(), 2000);
    return () => clearInterval(timer);
  }, [active, revalidator]);
  return (
    <>
      <PageHeader title="Jobs" subtitle="Every run of steps over a dataset version, newest first." />
      <ul className="mb-6 grid grid-cols-2 gap-3 sm:grid-cols-5" aria-label="Jobs by status">
        {(Object.keys(counts) as (keyof typeof counts)[]).map((status) => (
          <li key={status} className="rounded-card border border-rule bg-card p-3">
            <StatusBadge status={status} />
            <p className="mt-2 text-2xl font-semibold tabular-nums">{counts[status]}</p>
          </li>
        ))}
      </ul>
      {jobs.length === 0 ? (
        <EmptyState title="No jobs yet">Open a dataset and run a fit to start one.</EmptyState>
      ) : (
        <ListTable columns={[{ label: "Job" }, { label: "Dataset" }, { label: "Status" }, { label: "Progress", className: "w-56" }, { label: "Submitted" }]}>
          {jobs.map((j) => (
            <tr key={j.id} className="border-t border-rule">
              <td className="px-4 py-2">
                <Link to={`/jobs/${j.id}`} className="font-mono text-xs text-tide-600 hover:underline">
                  {j.id.slice(0, 8)}
                </Link>{" "}
                <span className="text-ink-soft">{j.processId}</span>
              </td>
              <td className="px-4 py-2">
                {j.datasetName} v{j.datasetVersion}
              </td>
              <td className="px-4 py-2">
                <StatusBadge status={j.status} />
              </td>
              <td className="px-4 py-2">
                <ProgressBar value={j.progress} label={`Progress of job ${j.id.slice(0, 8)}`} />
              </td>
              <td className="px-4 py-2 text-ink-soft">
                {new Date(j.createdAt).toLocaleString("en-GB")} · {j.submittedByEmail ?? "unknown"}
              </td>
            </tr>
          ))}
        </ListTable>
      )}
    </>
  );
}

export function meta() {
  return [{ title: "Jobs · Lissom" }];
}

import { requirePermission } from "../.server/guards.server";
import { listPublishedOutputs } from "../.server/outputs.server";
import { Caution } from "../components/caution";
import { EmptyState, PageHeader, buttonClass } from "../components/page";
import type { Route } from "./+types/library";

export async function loader({ request }: Route.LoaderArgs) {
  await requirePermission(request, { output: ["read"] });
  return { outputs: await listPublishedOutputs() };
}

export default function Library({ loaderData }: Route.ComponentProps) {
  const { outputs } = loaderData;
  return (
    <>
      <PageHeader title="Library" subtitle="Published, cleaned datasets ready to download." />
      <div className="mb-6">
        <Caution />
      </div>
      {outputs.length === 0 ? (
        <EmptyState title="Nothing published yet">When an engineer publishes a job's output, it appears here.</EmptyState>
      ) : (
        <ul className="grid gap-4 sm:grid-cols-2">
          {outputs.map((o) => {
            const tolerance = o.steps.find((s) => typeof s.params.tolerance === "number")?.params.tolerance as number | undefined;
            return (
              <li key={o.id} className="rounded-card border border-rule bg-card p-4">
                <p className="font-medium">{o.datasetName}</p>
                <p className="text-sm text-ink-soft">
                  Version {o.datasetVersion} · {o.steps.map((s) => s.step).join(" → ")}
                  {tolerance !== undefined ? ` · tolerance ${tolerance} m` : ""}
                </p>
                <p className="mt-1 break-all text-xs text-ink-faint">
                  {o.fileName} · {(o.sizeBytes / 1024).toFixed(1)} KiB · published {o.publishedAt ? new Date(o.publishedAt).toLocaleDateString("en-GB") : ""}
                </p>
                <a href={`/outputs/${o.id}/download`} className={`${buttonClass} mt-3`} download>
                  Download
                </a>
              </li>
            );
          })}
        </ul>
      )}
    </>
  );
}

export function meta() {
  return [{ title: "Library · Lissom" }];
}

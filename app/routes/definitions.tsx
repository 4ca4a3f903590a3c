import { Link } from "react-router";
import { listDefinitions, type StepInput } from "../.server/definitions.server";
import { requirePermission } from "../.server/guards.server";
import { can } from "../.server/permissions.server";
import { ListTable } from "../components/list-table";
import { EmptyState, PageHeader, buttonClass } from "../components/page";
import type { Route } from "./+types/definitions";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requirePermission(request, { definition: ["read"] });
  const definitions = await listDefinitions();
  return {
    definitions: definitions.map((d) => ({
      id: d.id,
      name: d.name,
      version: d.version,
      versionCount: d.versionCount,
      description: d.description,
      steps: (d.steps as StepInput[]).map((s) => s.step),
      formats: d.formats as string[],
      createdAt: d.createdAt,
      createdByEmail: d.createdByEmail,
    })),
    canWrite: can(user.role, { definition: ["write"] }),
  };
}

export default function Definitions({ loaderData }: Route.ComponentProps) {
  const { definitions, canWrite } = loaderData;
  return (
    <>
      <PageHeader
        title="Definitions"
        subtitle="Named lists of steps with their settings. Saving a change makes a new version; every job records the version it ran."
        actions={canWrite && (
          <Link to="/definitions/new" className={buttonClass}>
            New definition
          </Link>
        )}
      />
      {definitions.length === 0 ? (
        <EmptyState title="No definitions yet">
          {canWrite ? "Write one: pick the steps, try them on a feature, save." : "Engineers write definitions; they will appear here."}
        </EmptyState>
      ) : (
        <ListTable columns={[{ label: "Name" }, { label: "Latest" }, { label: "Steps" }, { label: "Outputs" }, { label: "Saved" }]}>
          {definitions.map((d) => (
            <tr key={d.id} className="border-t border-rule">
              <td className="px-4 py-2">
                <Link to={`/definitions/${d.id}`} className="font-medium text-tide-600 hover:underline">
                  {d.name}
                </Link>
                {d.description && <p className="text-xs text-ink-soft">{d.description}</p>}
              </td>
              <td className="px-4 py-2 tabular-nums">
                v{d.version} <span className="text-ink-faint">of {d.versionCount}</span>
              </td>
              <td className="px-4 py-2">{d.steps.join(" → ")}</td>
              <td className="px-4 py-2 text-ink-soft">{d.formats.join(", ")}</td>
              <td className="px-4 py-2 text-ink-soft">
                {new Date(d.createdAt).toLocaleString("en-GB")} · {d.createdByEmail ?? "unknown"}
              </td>
            </tr>
          ))}
        </ListTable>
      )}
    </>
  );
}

export function meta() {
  return [{ title: "Definitions · Lissom" }];
}

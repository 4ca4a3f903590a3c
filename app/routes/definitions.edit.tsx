import { data, redirect, useNavigation } from "react-router";
import { DefinitionConflictError, definitionFromForm, editorChoices, getDefinition, parseDefinition, previewFromForm, reviseDefinition } from "../.server/definitions.server";
import { setNotice } from "../.server/flash.server";
import { requirePermission } from "../.server/guards.server";
import { DefinitionForm } from "../components/definition-form";
import { PageHeader } from "../components/page";
import type { Route } from "./+types/definitions.edit";

export async function loader({ request, params }: Route.LoaderArgs) {
  await requirePermission(request, { definition: ["write"] });
  const definition = await getDefinition(params.definitionId);
  if (!definition) throw data({ detail: "There is no definition with this id." }, { status: 404 });
  return { definition, latestVersion: definition.versions[0]!.version, ...(await editorChoices()) };
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requirePermission(request, { definition: ["write"] });
  const form = await request.formData();
  if (form.get("intent") === "preview") return previewFromForm(form);
  const parsed = parseDefinition(definitionFromForm(form));
  if (!parsed.ok) return data({ issues: parsed.issues }, { status: 400 });
  try {
    const row = await reviseDefinition(params.definitionId, parsed.data, user.id);
    if (!row) throw data({ detail: "There is no definition with this id." }, { status: 404 });
    throw redirect(`/definitions/${row.id}`, { headers: await setNotice(`Saved ${row.name} as version ${row.version}.`) });
  } catch (error) {
    if (error instanceof DefinitionConflictError) return data({ error: error.message }, { status: 409 });
    throw error;
  }
}

export default function EditDefinition({ loaderData, actionData }: Route.ComponentProps) {
  const { definition, latestVersion } = loaderData;
  const busy = useNavigation().state === "submitting";
  const answer = actionData as { issues?: { field: string; message: string }[]; error?: string } | undefined;
  return (
    <>
      <PageHeader
        title={`Edit ${definition.name}`}
        subtitle={`Starting from version ${definition.version}; saving makes version ${latestVersion + 1}. Jobs that ran earlier versions keep them.`}
      />
      <DefinitionForm
        mode="edit"
        initial={definition}
        guide={loaderData.guide}
        formats={loaderData.formats}
        datasets={loaderData.datasets}
        issues={answer?.issues}
        error={answer?.error}
        busy={busy}
      />
    </>
  );
}

export function meta({ data }: Route.MetaArgs) {
  return [{ title: `Edit ${data?.definition.name ?? "definition"} · Lissom` }];
}

import { data, redirect, useNavigation } from "react-router";
import { DefinitionConflictError, createDefinition, definitionFromForm, editorChoices, parseDefinition, previewFromForm } from "../.server/definitions.server";
import { setNotice } from "../.server/flash.server";
import { requirePermission } from "../.server/guards.server";
import { DefinitionForm } from "../components/definition-form";
import { PageHeader } from "../components/page";
import type { Route } from "./+types/definitions.new";

export async function loader({ request }: Route.LoaderArgs) {
  await requirePermission(request, { definition: ["write"] });
  return editorChoices();
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requirePermission(request, { definition: ["write"] });
  const form = await request.formData();
  if (form.get("intent") === "preview") return previewFromForm(form);
  const parsed = parseDefinition(definitionFromForm(form));
  if (!parsed.ok) return data({ issues: parsed.issues }, { status: 400 });
  try {
    const row = await createDefinition(parsed.data, user.id);
    throw redirect(`/definitions/${row.id}`, { headers: await setNotice(`Saved ${row.name} as version 1.`) });
  } catch (error) {
    if (error instanceof DefinitionConflictError) return data({ error: error.message }, { status: 409 });
    throw error;
  }
}

export default function NewDefinition({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const answer = actionData as { issues?: { field: string; message: string }[]; error?: string } | undefined;
  return (
    <>
      <PageHeader title="New definition" subtitle="Pick the steps and their settings, try them on one feature, then save." />
      <DefinitionForm
        mode="new"
        initial={{ name: "", description: "", steps: [{ step: "fit", params: { tolerance: 5 } }], formats: ["geojson"], maxAttempts: 3, backoffMs: 2000 }}
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

export function meta() {
  return [{ title: "New definition · Lissom" }];
}

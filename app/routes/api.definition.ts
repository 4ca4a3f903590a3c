import { DefinitionConflictError, DefinitionInput, definitionDocument, describeDefinitionIssues, getDefinition, reviseDefinition } from "../.server/definitions.server";
import { problem, requirePermission } from "../.server/guards.server";
import type { Route } from "./+types/api.definition";

/** GET /api/definitions/{id}: one version, with the list of all versions of its name. */
export async function loader({ request, params }: Route.LoaderArgs) {
  await requirePermission(request, { definition: ["read"] });
  const def = await getDefinition(params.definitionId);
  if (!def) return problem(404, "No such definition", `There is no definition version "${params.definitionId}".`);
  return Response.json(definitionDocument(def, { versions: def.versions }));
}

/**
 * PUT /api/definitions/{id}: saves the body as the next version under the same name (rows are
 * never edited). 201 with the new version and its `Location`. `name` may be left out; if given
 * it must be the definition's name.
 */
export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "PUT") return problem(405, "Method not allowed", "PUT a definition to save it as a new version.");
  const user = await requirePermission(request, { definition: ["write"] });
  let body: unknown;
  try {
    body = await request.json();
  } catch {
    return problem(400, "Invalid body", "The body is not JSON.");
  }
  const base = await getDefinition(params.definitionId);
  if (!base) return problem(404, "No such definition", `There is no definition version "${params.definitionId}".`);
  const withName = body && typeof body === "object" && !Array.isArray(body) ? { name: base.name, ...body } : body;
  const parsed = DefinitionInput.safeParse(withName);
  if (!parsed.success) {
    const fields = describeDefinitionIssues(parsed.error, withName);
    return problem(400, "Invalid definition", fields.map((f) => f.message).join("; "), { fields });
  }
  try {
    const row = await reviseDefinition(params.definitionId, parsed.data, user.id);
    if (!row) return problem(404, "No such definition", `There is no definition version "${params.definitionId}".`);
    return Response.json(definitionDocument(row), { status: 201, headers: { Location: `/api/definitions/${row.id}` } });
  } catch (error) {
    if (error instanceof DefinitionConflictError) return problem(409, "Cannot save", error.message);
    throw error;
  }
}

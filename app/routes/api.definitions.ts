import { DefinitionConflictError, createDefinition, definitionDocument, listDefinitions, parseDefinition } from "../.server/definitions.server";
import { problem, requirePermission } from "../.server/guards.server";
import type { Route } from "./+types/api.definitions";

/** GET /api/definitions: the latest version of every definition. */
export async function loader({ request }: Route.LoaderArgs) {
  await requirePermission(request, { definition: ["read"] });
  const rows = await listDefinitions();
  return Response.json({
    definitions: rows.map((d) => ({ ...definitionDocument(d), versionCount: d.versionCount })),
    links: [{ href: "/api/definitions", rel: "self", type: "application/json", title: "definitions" }],
  });
}

/**
 * POST /api/definitions: a new definition (version 1). Body: `{name, description?, steps:
 * [{step, params}], formats?, maxAttempts?, backoffMs?}`. 201 with the definition and its
 * `Location`; 400 names the step and field of each problem; 409 when the name is taken.
 */
export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return problem(405, "Method not allowed", "POST a definition to create it.");
  const user = await requirePermission(request, { definition: ["write"] });
  let body: unknown;
  try {
    body = await request.json();
  } catch {
    return problem(400, "Invalid body", 'The body is not JSON. Send {"name": "…", "steps": [{"step": "fit", "params": {"tolerance": 5}}]}.');
  }
  const parsed = parseDefinition(body);
  if (!parsed.ok) return problem(400, "Invalid definition", parsed.message, { fields: parsed.issues });
  try {
    const row = await createDefinition(parsed.data, user.id);
    return Response.json(definitionDocument(row), { status: 201, headers: { Location: `/api/definitions/${row.id}` } });
  } catch (error) {
    if (error instanceof DefinitionConflictError) return problem(409, "Name in use", error.message);
    throw error;
  }
}

import { redirect } from "react-router";
import { requireUser } from "../.server/guards.server";
import { can } from "../.server/permissions.server";
import type { Route } from "./+types/home";

/** The start page is the first place the role can use: the overview board for the team, the library for consumers. */
export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireUser(request);
  throw redirect(can(user.role, { job: ["read"] }) ? "/overview" : "/library");
}

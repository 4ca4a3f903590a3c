import { auth } from "../.server/auth.server";
import type { Route } from "./+types/api.auth";

// better-auth's own endpoints (sign-in, sign-out, session, admin) under /api/auth/*.
export async function loader({ request }: Route.LoaderArgs) {
  return auth().handler(request);
}

export async function action({ request }: Route.ActionArgs) {
  return auth().handler(request);
}

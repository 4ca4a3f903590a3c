import { data, redirect } from "react-router";
import { auth, type SessionUser } from "./auth.server";
import { can, type Permission } from "./permissions.server";

function isApi(request: Request): boolean {
  return new URL(request.url).pathname.startsWith("/api/");
}

/** The signed-in person, or null. */
export async function getUser(request: Request): Promise<SessionUser | null> {
  const session = await auth().api.getSession({ headers: request.headers });
  if (!session) return null;
  const u = session.user as { id: string; email: string; name: string; role?: string | null };
  return { id: u.id, email: u.email, name: u.name, role: u.role ?? "consumer" };
}

/**
 * Throws unless someone is signed in: pages redirect to sign-in (coming back afterwards),
 * API routes answer 401 JSON.
 */
export async function requireUser(request: Request): Promise<SessionUser> {
  const user = await getUser(request);
  if (user) return user;
  if (isApi(request)) {
    throw problem(401, "Sign-in required", "Sign in through POST /api/auth/sign-in/email, then send its session cookie.");
  }
  const url = new URL(request.url);
  throw redirect(`/sign-in?redirectTo=${encodeURIComponent(url.pathname + url.search)}`);
}

/** Throws 403 unless the signed-in person's role holds every action in `permission`. */
export async function requirePermission(request: Request, permission: Permission): Promise<SessionUser> {
  const user = await requireUser(request);
  if (can(user.role, permission)) return user;
  const wanted = Object.entries(permission)
    .map(([resource, actions]) => `${resource}: ${(actions as string[]).join(", ")}`)
    .join("; ");
  const detail = `Your role (${user.role}) may not do this (${wanted}).`;
  if (isApi(request)) throw problem(403, "Forbidden", detail);
  throw data({ title: "Forbidden", status: 403, detail }, { status: 403 });
}

/** An RFC 9457 problem document, the error shape of every API route. */
export function problem(status: number, title: string, detail: string, extra: Record<string, unknown> = {}): Response {
  return Response.json({ type: "about:blank", title, status, detail, ...extra }, { status, headers: { "Content-Type": "application/problem+json" } });
}

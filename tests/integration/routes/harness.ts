import { mkdtempSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

/**
 * Points the app at a private database and storage folder, boots it (migrations, demo seed,
 * embedded queue and worker) and signs in the four demo accounts. Route modules are then
 * called directly with Request objects, as the server would.
 */
export async function bootTestApp() {
  const dir = mkdtempSync(join(tmpdir(), "lissom-routes-"));
  process.env.DATABASE_URL = `file:${join(dir, "lissom.db")}`;
  process.env.STORAGE_DIR = join(dir, "storage");
  process.env.AUTH_SECRET = "test-secret-test-secret-test-secret-42";
  process.env.PUBLIC_URL = "http://lissom.test";
  process.env.LISSOM_DEMO = "1";
  process.env.NODE_ENV = "test";
  const { boot } = await import("../../../app/.server/boot.server");
  await boot();
  const { auth } = await import("../../../app/.server/auth.server");
  const cookies: Record<string, string> = {};
  for (const role of ["admin", "engineer", "operator", "consumer"]) {
    const res = await auth().api.signInEmail({ body: { email: `${role}@example.com`, password: "lissom-demo" }, asResponse: true });
    if (!res.ok) throw new Error(`demo sign-in failed for ${role}: ${res.status}`);
    cookies[role] = res.headers.getSetCookie().map((c) => c.split(";")[0]).join("; ");
  }
  return { dir, cookies };
}

export function request(path: string, init: RequestInit & { cookie?: string } = {}): Request {
  const headers = new Headers(init.headers);
  if (init.cookie) headers.set("Cookie", init.cookie);
  return new Request(`http://lissom.test${path}`, { ...init, headers });
}

/** Runs a loader or action and returns a Response whether it returned, threw a Response, or threw data(). */
export async function call(fn: (args: never) => unknown, args: { request: Request; params?: Record<string, string> }): Promise<{ status: number; body: unknown; headers: Headers }> {
  try {
    const out = await fn({ request: args.request, params: args.params ?? {}, context: {} } as never);
    return normalise(out);
  } catch (thrown) {
    return normalise(thrown);
  }
}

async function normalise(value: unknown): Promise<{ status: number; body: unknown; headers: Headers }> {
  if (value instanceof Response) {
    const text = await value.text();
    let body: unknown = text;
    try {
      body = JSON.parse(text);
    } catch {
      // not JSON
    }
    return { status: value.status, body, headers: value.headers };
  }
  if (value && typeof value === "object" && "type" in value && (value as { type: string }).type === "DataWithResponseInit") {
    const d = value as unknown as { data: unknown; init?: ResponseInit | null };
    return { status: d.init?.status ?? 200, body: d.data, headers: new Headers(d.init?.headers) };
  }
  if (value instanceof Error) throw value;
  return { status: 200, body: value, headers: new Headers() };
}

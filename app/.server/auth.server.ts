import { betterAuth } from "better-auth";
import { drizzleAdapter } from "better-auth/adapters/drizzle";
import { admin } from "better-auth/plugins";
import { db, schema } from "./db/client.server";
import { env } from "./env.server";
import { ac, roles } from "./permissions.server";

function createAuth() {
  const e = env();
  return betterAuth({
    appName: "Lissom",
    baseURL: e.baseURL,
    secret: e.authSecret,
    database: drizzleAdapter(db(), {
      provider: "sqlite",
      schema: { user: schema.user, session: schema.session, account: schema.account, verification: schema.verification },
    }),
    emailAndPassword: { enabled: true, minPasswordLength: 8 },
    // Sign-up is closed: an admin creates accounts and gives them a role.
    disabledPaths: ["/sign-up/email"],
    plugins: [admin({ ac, roles, defaultRole: "consumer", adminRoles: ["admin"] })],
    telemetry: { enabled: false },
    // The console is served from one origin; any local port is trusted in development.
    trustedOrigins: e.NODE_ENV === "production" ? [e.baseURL] : [e.baseURL, "http://localhost:*", "http://127.0.0.1:*"],
    advanced: { useSecureCookies: e.baseURL.startsWith("https:") },
  });
}

let instance: ReturnType<typeof createAuth> | undefined;

export function auth() {
  instance ??= createAuth();
  return instance;
}

export type SessionUser = { id: string; email: string; name: string; role: string };

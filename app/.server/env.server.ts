import { randomBytes } from "node:crypto";
import { existsSync, mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { dirname, resolve } from "node:path";
import { z } from "zod";

/**
 * Configuration from the environment, checked once. Every setting has a working default
 * (DESIGN.md, "Configuration"); a bad value stops the start with the list of bad fields.
 */
const schema = z.object({
  NODE_ENV: z.enum(["development", "production", "test"]).default("development"),
  LISSOM_DEMO: z.enum(["0", "1", "true", "false"]).optional(),
  DATABASE_URL: z.string().min(1).default("file:data/lissom.db"),
  REDIS_URL: z.string().url().optional(),
  STORAGE_DIR: z.string().min(1).default("data/storage"),
  AUTH_SECRET: z.string().min(32, "AUTH_SECRET must be at least 32 characters").optional(),
  PUBLIC_URL: z.string().url().optional(),
  PORT: z.coerce.number().int().positive().default(3000),
  LOG_LEVEL: z.enum(["fatal", "error", "warn", "info", "debug", "trace", "silent"]).default("info"),
  WORKER_CONCURRENCY: z.coerce.number().int().min(1).max(64).default(1),
  /** Largest accepted upload in megabytes (read by app/formats/limits.ts; checked here at start). */
  LISSOM_MAX_UPLOAD_MB: z.coerce.number().positive("LISSOM_MAX_UPLOAD_MB must be a positive number of megabytes").optional(),
});

export type Env = z.infer<typeof schema> & { demo: boolean; authSecret: string; baseURL: string };

let cached: Env | undefined;

export function env(): Env {
  if (cached) return cached;
  const parsed = schema.safeParse(process.env);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join(".")}: ${i.message}`);
    throw new Error(`Lissom cannot start: bad environment settings\n${lines.join("\n")}`);
  }
  const e = parsed.data;
  const demoFlag = e.LISSOM_DEMO === "1" || e.LISSOM_DEMO === "true";
  const demoOff = e.LISSOM_DEMO === "0" || e.LISSOM_DEMO === "false";
  const demo = demoFlag || (!demoOff && e.NODE_ENV !== "production");
  cached = {
    ...e,
    demo,
    authSecret: e.AUTH_SECRET ?? devAuthSecret(e.NODE_ENV === "production" && !demo),
    baseURL: e.PUBLIC_URL ?? `http://localhost:${e.PORT}`,
  };
  return cached;
}

/** Outside production a secret is generated once and kept under data/ so sessions survive restarts. */
function devAuthSecret(production: boolean): string {
  if (production) {
    throw new Error(
      "Lissom cannot start: AUTH_SECRET is not set. In production set AUTH_SECRET to a random string of at least 32 characters (for example `openssl rand -hex 32`).",
    );
  }
  const file = resolve("data/auth-secret");
  if (existsSync(file)) return readFileSync(file, "utf8").trim();
  mkdirSync(dirname(file), { recursive: true });
  const secret = randomBytes(32).toString("hex");
  writeFileSync(file, secret + "\n", { mode: 0o600 });
  return secret;
}

/** For tests: forget the cached settings so a changed process.env is read again. */
export function resetEnvForTests(): void {
  cached = undefined;
}

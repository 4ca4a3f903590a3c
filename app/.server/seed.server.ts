import { existsSync, readdirSync } from "node:fs";
import { join, resolve } from "node:path";
import { eq } from "drizzle-orm";
import { auth } from "./auth.server";
import { ingestFile } from "./datasets.server";
import { db, schema } from "./db/client.server";
import { logger } from "./logger.server";
import type { RoleName } from "./permissions.server";

export const DEMO_PASSWORD = "lissom-demo";
export const DEMO_ACCOUNTS: { email: string; name: string; role: RoleName }[] = [
  { email: "admin@example.com", name: "Demo admin", role: "admin" },
  { email: "engineer@example.com", name: "Demo engineer", role: "engineer" },
  { email: "operator@example.com", name: "Demo operator", role: "operator" },
  { email: "consumer@example.com", name: "Demo consumer", role: "consumer" },
];

/** Demo mode: the four accounts and one sample dataset, created once. */
export async function seedDemo(): Promise<void> {
  const ctx = await auth().$context;
  for (const account of DEMO_ACCOUNTS) {
    const existing = await db().query.user.findFirst({ where: eq(schema.user.email, account.email) });
    if (existing) continue;
    const user = await ctx.internalAdapter.createUser(
      { email: account.email, name: account.name, emailVerified: true, role: account.role },
      { method: "admin" },
    );
    await ctx.internalAdapter.linkAccount({
      userId: user.id,
      providerId: "credential",
      accountId: user.id,
      password: await ctx.password.hash(DEMO_PASSWORD),
    });
  }
  logger.info(
    { accounts: DEMO_ACCOUNTS.map((a) => a.email), password: DEMO_PASSWORD },
    `Demo mode: sign in as ${DEMO_ACCOUNTS.map((a) => a.email).join(", ")} with password "${DEMO_PASSWORD}". Set NODE_ENV=production (without LISSOM_DEMO) to turn demo mode off.`,
  );

  const sample = demoSampleFile();
  if (!sample) {
    logger.warn("No sample dataset found under samples/; run `npm run samples` to generate them.");
    return;
  }
  const name = sample.name.replace(/\.geojson$/, "");
  const already = await db().query.datasets.findFirst({ where: eq(schema.datasets.name, name) });
  if (already) return;
  const engineer = await db().query.user.findFirst({ where: eq(schema.user.email, "engineer@example.com") });
  await ingestFile(name, sample.path, engineer?.id ?? null);
  logger.info({ dataset: name }, "Demo mode: loaded a sample dataset");
}

/** The roads of the samples' invented town, if the generator's files are present. */
function demoSampleFile(): { name: string; path: string } | null {
  const dir = resolve("samples");
  if (!existsSync(dir)) return null;
  const files = readdirSync(dir).filter((f) => f.endsWith(".geojson")).sort();
  const pick = files.find((f) => f.endsWith("-roads.geojson")) ?? files[0];
  return pick ? { name: pick, path: join(dir, pick) } : null;
}

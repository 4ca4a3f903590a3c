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

/** Demo mode: the four accounts and the sample datasets, created once. */
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

  const samples = demoSampleFiles();
  if (samples.length === 0) {
    logger.warn("No sample dataset found under samples/; run `npm run samples` to generate them.");
    return;
  }
  const engineer = await db().query.user.findFirst({ where: eq(schema.user.email, "engineer@example.com") });
  for (const sample of samples) {
    const already = await db().query.datasets.findFirst({ where: eq(schema.datasets.name, sample.name) });
    if (already) continue;
    await ingestFile(sample.name, sample.path, engineer?.id ?? null);
    logger.info({ dataset: sample.name }, "Demo mode: loaded a sample dataset");
  }
}

/**
 * The samples' invented town, if the generator's files are present: its roads as GeoJSON and
 * its lines as a zipped Shapefile in a projected CRS.
 */
function demoSampleFiles(): { name: string; path: string }[] {
  const dir = resolve("samples");
  if (!existsSync(dir)) return [];
  const files = readdirSync(dir).sort();
  const geojson = files.filter((f) => f.endsWith(".geojson"));
  const picks = [geojson.find((f) => f.endsWith("-roads.geojson")) ?? geojson[0], files.find((f) => f.endsWith(".zip"))];
  return picks.filter((f): f is string => Boolean(f)).map((f) => ({ name: f.replace(/\.(geojson|zip)$/, ""), path: join(dir, f) }));
}

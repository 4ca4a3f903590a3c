import { mkdirSync } from "node:fs";
import { dirname, resolve } from "node:path";
import { createClient, type Client } from "@libsql/client";
import { drizzle, type LibSQLDatabase } from "drizzle-orm/libsql";
import { migrate } from "drizzle-orm/libsql/migrator";
import { env } from "../env.server";
import * as schema from "./schema";

export type Db = LibSQLDatabase<typeof schema>;

let client: Client | undefined;
let database: Db | undefined;

/** The one database handle of this process (web or worker). */
export function db(): Db {
  if (database) return database;
  const url = env().DATABASE_URL;
  if (url.startsWith("file:")) {
    const path = url.slice("file:".length);
    if (path && path !== ":memory:") mkdirSync(dirname(resolve(path)), { recursive: true });
  }
  client = createClient({ url });
  database = drizzle(client, { schema });
  return database;
}

/**
 * Applies the drizzle-kit migrations in `drizzle/`. SQLite settings that make the web process
 * and worker processes share one file safely: WAL lets readers work while a job writes, and a
 * busy timeout makes a writer wait instead of failing while another holds the lock.
 */
export async function migrateDatabase(): Promise<void> {
  const d = db();
  await client!.execute("PRAGMA journal_mode = WAL");
  await client!.execute("PRAGMA busy_timeout = 5000");
  await client!.execute("PRAGMA foreign_keys = ON");
  await migrate(d, { migrationsFolder: resolve("drizzle") });
}

export async function closeDatabase(): Promise<void> {
  client?.close();
  client = undefined;
  database = undefined;
}

export { schema };

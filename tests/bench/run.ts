// Runs every benchmark module in this folder, one after another, in this process.
// Each `*.bench.ts` exports a default async function that prints its own ratios.
import { readdirSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";

const here = dirname(fileURLToPath(import.meta.url));
const only = process.argv[2];
const files = readdirSync(here)
  .filter((f) => f.endsWith(".bench.ts"))
  .filter((f) => !only || f.startsWith(only))
  .sort();

if (files.length === 0) {
  console.error(only ? `No benchmark matches "${only}" in tests/bench.` : "No benchmarks in tests/bench.");
  process.exit(1);
}
for (const file of files) {
  console.log(`\n== ${file.replace(/\.bench\.ts$/, "")} ==`);
  const mod = await import(pathToFileURL(join(here, file)).href);
  await mod.default();
}

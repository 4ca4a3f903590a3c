// Entry of a runner thread (jobs/runner/thread-pool.ts). Worker threads do not inherit the
// TypeScript loader of the process that starts them under every launcher (vitest, a built
// server), so the thread registers tsx itself and then loads its TypeScript main module.
import { tsImport } from "tsx/esm/api";

await tsImport("./thread-main.ts", import.meta.url);

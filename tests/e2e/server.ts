import { spawn, type ChildProcess } from "node:child_process";
import { mkdtempSync } from "node:fs";
import { createServer } from "node:net";
import { tmpdir } from "node:os";
import { join } from "node:path";

/** A free TCP port on the loopback interface. */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = createServer();
    srv.listen(0, "127.0.0.1", () => {
      const { port } = srv.address() as { port: number };
      srv.close(() => resolve(port));
    });
    srv.on("error", reject);
  });
}

export interface RunningServer {
  url: string;
  dataDir: string;
  process: ChildProcess;
  output: () => string;
  stop: () => Promise<void>;
}

/**
 * Starts the built Lissom server (build/server) in demo mode with its own database and storage
 * folder, and waits until /healthz answers.
 */
export async function startServer(extraEnv: Record<string, string> = {}): Promise<RunningServer> {
  const port = await freePort();
  const dataDir = mkdtempSync(join(tmpdir(), "lissom-e2e-"));
  let output = "";
  const child = spawn(process.execPath, ["node_modules/@react-router/serve/bin.js", "build/server/index.js"], {
    env: {
      ...process.env,
      PORT: String(port),
      HOST: "127.0.0.1",
      LISSOM_DEMO: "1",
      DATABASE_URL: `file:${join(dataDir, "lissom.db")}`,
      STORAGE_DIR: join(dataDir, "storage"),
      AUTH_SECRET: "e2e-secret-e2e-secret-e2e-secret-e2e-secret",
      PUBLIC_URL: `http://127.0.0.1:${port}`,
      LOG_LEVEL: "warn",
      ...extraEnv,
    },
    stdio: ["ignore", "pipe", "pipe"],
  });
  child.stdout!.on("data", (d) => (output += d));
  child.stderr!.on("data", (d) => (output += d));
  const url = `http://127.0.0.1:${port}`;
  const deadline = Date.now() + 60_000;
  for (;;) {
    if (child.exitCode !== null) throw new Error(`The server exited (${child.exitCode}):\n${output}`);
    try {
      const res = await fetch(`${url}/healthz`);
      if (res.ok) break;
    } catch {
      // not listening yet
    }
    if (Date.now() > deadline) {
      child.kill();
      throw new Error(`The server did not become healthy within 60 s:\n${output}`);
    }
    await new Promise((r) => setTimeout(r, 250));
  }
  return {
    url,
    dataDir,
    process: child,
    output: () => output,
    stop: () =>
      new Promise<void>((resolve) => {
        if (child.exitCode !== null) return resolve();
        child.once("exit", () => resolve());
        child.kill("SIGTERM");
        setTimeout(() => child.kill("SIGKILL"), 5000);
      }),
  };
}

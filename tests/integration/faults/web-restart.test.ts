/**
 * Fault: the web process is restarted (killed with SIGKILL) with jobs accepted and running, in
 * embedded mode, where the in-memory queue forgets everything when the process ends. Issue 5:
 * "they finish after the restart, none twice" (DESIGN.md: the database is the source of truth;
 * at boot, jobs left accepted or running are queued again).
 *
 * Three jobs: one fitted whole and running when the process dies, one cut into chunks, one
 * still waiting. Always on the embedded queue (this fault is about it), whatever REDIS_URL says.
 */
import { spawn } from "node:child_process";
import { readdirSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { finished, jobRecord, privateEnv, ROOT, setEnv, stopProcess, storeTownDataset, waitFor, waitForJob, type RunnerEnv } from "../runner/harness";

let env: RunnerEnv;

beforeAll(async () => {
  env = privateEnv("web-restart", { LISSOM_FANOUT_VERTICES: "55000", LISSOM_CHUNK_VERTICES: "30000" });
  delete process.env.REDIS_URL;
  const { migrateDatabase } = await import("../../../app/.server/db/client.server");
  await migrateDatabase();
});

afterAll(async () => {
  const { closeQueue } = await import("../../../jobs/queue");
  await closeQueue();
});

describe("the web process restarted with jobs accepted and running (embedded queue)", () => {
  it("finishes every job after the restart, each exactly once", async () => {
    const whole = await storeTownDataset("restart whole", 50_000, { seed: 31 });
    const fanned = await storeTownDataset("restart fanned", 80_000, { seed: 32 });
    const waiting = await storeTownDataset("restart waiting", 3_000, { seed: 33 });
    const childEnv: NodeJS.ProcessEnv = { ...process.env, ...env.env, WORKER_CONCURRENCY: "1" };
    delete childEnv.REDIS_URL;
    const child = spawn(process.execPath, ["--import", "tsx", "tests/integration/faults/web-process.ts", fanned.version.id, whole.version.id, waiting.version.id], {
      cwd: ROOT,
      env: childEnv,
      stdio: ["ignore", "pipe", "pipe"],
    });
    let output = "";
    child.stdout.on("data", (d) => (output += d));
    child.stderr.on("data", (d) => (output += d));
    let ids: string[] = [];
    try {
      await waitFor(() => {
        const line = output.split("\n").find((l) => l.startsWith('{"submitted"'));
        if (line) ids = (JSON.parse(line) as { submitted: string[] }).submitted;
        return ids.length === 3;
      }, 60_000, "the web process to submit its jobs");
      // One worker slot: the fanned-out job is cut (its chunks queue behind the others), then
      // the whole job runs; the process dies while it does.
      await waitForJob(ids[1]!, (r) => r.featuresDone > 0 || finished(r), 60_000, "features done");
    } catch (error) {
      await stopProcess(child);
      throw new Error(`${(error as Error).message}\nweb process output:\n${output}`);
    }
    await stopProcess(child, "SIGKILL");

    const before = await Promise.all(ids.map((id) => jobRecord(id)));
    expect(before[0]!.job.status).toBe("running");
    expect(before[0]!.chunks.length).toBeGreaterThanOrEqual(2);
    expect(before[1]!.job.status).toBe("running");
    expect(before[2]!.job.status).toBe("accepted");
    const runningAtKill = new Set(before.filter((r) => r.job.status === "running").map((r) => r.job.id));

    // The restart: this process boots the app on the same database and storage.
    setEnv(env.env);
    const { boot } = await import("../../../app/.server/boot.server");
    await boot();
    for (const id of ids) await waitForJob(id, finished, 120_000, "finished after the restart");

    const { storagePath } = await import("../../../app/.server/storage.server");
    const datasets = [fanned, whole, waiting];
    for (const [i, id] of ids.entries()) {
      const record = await jobRecord(id);
      expect(record.job.status).toBe("successful");
      expect(record.outputs).toHaveLength(1);
      expect(readdirSync(storagePath(`outputs/${id}`))).toHaveLength(1);
      expect(record.reports).toHaveLength(datasets[i]!.features);
      expect(record.log.filter((l) => l.message.startsWith("Finished:"))).toHaveLength(1);
      expect(record.log.some((l) => l.message === "Queued again: the queue had lost it.")).toBe(true);
      expect(record.attempts.filter((a) => a.status === "successful")).toHaveLength(1);
      // Only a job that was running when the process died has an abandoned attempt.
      const abandoned = record.attempts.filter((a) => /Abandoned/.test(a.error ?? ""));
      if (!runningAtKill.has(id)) expect(abandoned).toHaveLength(0);
    }
    expect((await jobRecord(ids[1]!)).attempts.map((a) => a.status)).toEqual(["failed", "successful"]);
    const fannedRecord = await jobRecord(ids[0]!);
    expect(fannedRecord.chunks.length).toBeGreaterThanOrEqual(2);
    expect(fannedRecord.chunks.every((c) => c.status === "successful")).toBe(true);
    expect((await jobRecord(ids[2]!)).attempts.map((a) => a.status)).toEqual(["successful"]);
  }, 180_000);
});

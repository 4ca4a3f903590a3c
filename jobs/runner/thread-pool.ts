import { existsSync } from "node:fs";
import { dirname, join, resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { Worker } from "node:worker_threads";
import type { FeatureReport } from "../steps";
import { CONTROL_STOP, runPipelineTask, type PipelineResult, type PipelineTask } from "./pipeline";

/**
 * Worker threads that run pipeline tasks (jobs/runner/pipeline.ts) off the worker's event loop:
 * the CPU-heavy fitting runs there while the main thread keeps renewing BullMQ locks, writing
 * progress and heartbeats (BullMQ's guidance: "CPU-heavy steps run in sandboxed processors or
 * worker threads so lock renewal never starves").
 *
 * A thread is started on first need and kept for the next task (starting one loads the
 * TypeScript of the geometry and formats, about a second); at most `size` run at once, one per
 * job slot of the worker. A thread that crashes fails only its task (an infrastructure error,
 * retried) and is replaced.
 */
export class ThreadPool {
  private idle: Worker[] = [];
  private all = new Set<Worker>();
  private closed = false;

  constructor(private readonly size: number) {}

  /** Runs `task` in a thread; `control` is shared with it (see pipeline.ts). */
  async run(task: PipelineTask, control: Int32Array, onReports?: (reports: FeatureReport[]) => void): Promise<PipelineResult> {
    if (this.closed) throw new Error("the runner's thread pool is closed");
    const thread = this.idle.pop() ?? (await this.spawn());
    return new Promise<PipelineResult>((resolvePromise, reject) => {
      let settled = false;
      const finish = (reuse: boolean) => {
        settled = true;
        thread.off("message", onMessage);
        thread.off("error", onError);
        thread.off("exit", onExit);
        if (reuse && !this.closed && this.idle.length < this.size) this.idle.push(thread);
        else void this.retire(thread);
      };
      const onMessage = (message: { type: string; reports?: FeatureReport[]; result?: PipelineResult; error?: SerialisedError }) => {
        if (message.type === "reports") onReports?.(message.reports!);
        else if (message.type === "done") {
          finish(true);
          resolvePromise(message.result!);
        } else if (message.type === "failed") {
          finish(true);
          reject(rebuildError(message.error!));
        }
      };
      const onError = (error: Error) => {
        if (settled) return;
        finish(false);
        reject(new Error(`The runner thread failed: ${error.message}`, { cause: error }));
      };
      const onExit = (code: number) => {
        if (settled) return;
        finish(false);
        reject(new Error(`The runner thread exited (code ${code}) before finishing its task.`));
      };
      thread.on("message", onMessage);
      thread.on("error", onError);
      thread.on("exit", onExit);
      thread.postMessage({ type: "task", task, control });
    });
  }

  /**
   * Starts threads ahead of the first task, so the first job does not wait for one to load;
   * a thread that fails to start is only logged through the returned promise.
   */
  async warm(): Promise<void> {
    const missing = this.size - this.all.size;
    const started = await Promise.allSettled(Array.from({ length: missing }, () => this.spawn()));
    for (const r of started) {
      if (r.status === "fulfilled") {
        if (!this.closed && this.idle.length < this.size) this.idle.push(r.value);
        else await this.retire(r.value);
      }
    }
    const failed = started.find((r): r is PromiseRejectedResult => r.status === "rejected");
    if (failed) throw failed.reason;
  }

  /** Threads started so far and still alive (for tests). */
  get threads(): number {
    return this.all.size;
  }

  async close(): Promise<void> {
    this.closed = true;
    const threads = [...this.all];
    this.idle = [];
    await Promise.all(threads.map((t) => this.retire(t)));
  }

  private async spawn(): Promise<Worker> {
    const thread = new Worker(threadEntryPath(), { stdout: false, stderr: false });
    this.all.add(thread);
    thread.unref();
    await new Promise<void>((resolvePromise, reject) => {
      const onMessage = (m: { type?: string }) => {
        if (m.type !== "ready") return;
        cleanup();
        resolvePromise();
      };
      const onError = (error: Error) => {
        cleanup();
        this.all.delete(thread);
        reject(new Error(`Could not start a runner thread: ${error.message}`, { cause: error }));
      };
      const onExit = (code: number) => {
        cleanup();
        this.all.delete(thread);
        reject(new Error(`A runner thread exited while starting (code ${code}).`));
      };
      const cleanup = () => {
        thread.off("message", onMessage);
        thread.off("error", onError);
        thread.off("exit", onExit);
      };
      thread.on("message", onMessage);
      thread.on("error", onError);
      thread.on("exit", onExit);
    });
    return thread;
  }

  private async retire(thread: Worker): Promise<void> {
    if (!this.all.delete(thread)) return;
    await thread.terminate();
  }
}

/** Runs a task on the calling thread, with the same interface (tests, benchmarks). */
export async function runInline(task: PipelineTask, control: Int32Array, onReports?: (reports: FeatureReport[]) => void): Promise<PipelineResult> {
  return runPipelineTask(task, control, { onReports });
}

/** Asks a running task to stop before its next feature. */
export function requestStop(control: Int32Array): void {
  Atomics.store(control, CONTROL_STOP, 1);
}

interface SerialisedError {
  name: string;
  message: string;
  code?: unknown;
  stack?: string;
}

function rebuildError(e: SerialisedError): Error {
  const error = new Error(e.message) as Error & { code?: unknown };
  error.name = e.name;
  if (e.code !== undefined) error.code = e.code;
  if (e.stack) error.stack = e.stack;
  return error;
}

/**
 * thread-entry.mjs beside this module; when this module was bundled elsewhere (the built web
 * server), the copy under the working folder's jobs/runner/ (the app runs from its checkout).
 */
function threadEntryPath(): string {
  const candidates: string[] = [];
  try {
    candidates.push(join(dirname(fileURLToPath(import.meta.url)), "thread-entry.mjs"));
  } catch {
    // import.meta.url is not a file URL
  }
  candidates.push(resolve("jobs/runner/thread-entry.mjs"));
  const found = candidates.find((c) => existsSync(c));
  if (!found) throw new Error(`The runner thread entry is missing (looked for ${candidates.join(", ")}).`);
  return found;
}

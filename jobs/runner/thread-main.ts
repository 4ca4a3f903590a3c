/**
 * The body of a runner thread: waits for pipeline tasks from the worker's main thread, runs
 * them one at a time and answers with their result or error. Messages:
 *   in:  { type: "task", task, control }            control: Int32Array on a SharedArrayBuffer
 *   out: { type: "reports", reports }               batches of feature reports, in order
 *        { type: "done", result } | { type: "failed", error: { name, message, code, stack } }
 */
import { parentPort } from "node:worker_threads";
import { runPipelineTask, type PipelineTask } from "./pipeline";

if (!parentPort) throw new Error("jobs/runner/thread-main.ts runs inside a worker thread only");
const port = parentPort;

port.on("message", (message: { type: "task"; task: PipelineTask; control: Int32Array }) => {
  if (message.type !== "task") return;
  runPipelineTask(message.task, message.control, { onReports: (reports) => port.postMessage({ type: "reports", reports }) }).then(
    (result) => port.postMessage({ type: "done", result }),
    (error: unknown) => port.postMessage({ type: "failed", error: serialiseError(error) }),
  );
});
port.postMessage({ type: "ready" });

function serialiseError(error: unknown) {
  if (error instanceof Error) {
    return { name: error.name, message: error.message, code: (error as { code?: unknown }).code, stack: error.stack };
  }
  return { name: "Error", message: String(error) };
}

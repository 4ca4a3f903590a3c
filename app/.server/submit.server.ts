import { QueueUnavailableError } from "../../jobs/queue";
import { getDataset } from "./datasets.server";
import { submitJob, type JobRow } from "./jobs.server";
import { describeIssues, isProcessId, processes } from "./processes.server";

export type SubmitOutcome =
  | { ok: true; job: JobRow }
  | { ok: false; status: number; title: string; message: string; fields?: { field: string; message: string }[] };

/**
 * Runs a process on the latest version of a dataset, for the console and the API alike.
 * Inputs are checked before anything is stored; a queue that is away answers 503.
 */
export async function submitProcess(processId: string, rawInputs: unknown, userId: string): Promise<SubmitOutcome> {
  if (!isProcessId(processId)) return { ok: false, status: 404, title: "No such process", message: `There is no process "${processId}".` };
  const process = processes[processId];
  const parsed = process.inputs.safeParse(rawInputs);
  if (!parsed.success) {
    const fields = describeIssues(parsed.error);
    return { ok: false, status: 400, title: "Invalid inputs", message: fields.map((f) => `${f.field}: ${f.message}`).join("; "), fields };
  }
  const dataset = await getDataset(parsed.data.dataset);
  const latest = dataset?.versions[0];
  if (!dataset || !latest) {
    return { ok: false, status: 400, title: "Invalid inputs", message: `dataset: no dataset with id "${parsed.data.dataset}".`, fields: [{ field: "dataset", message: "no such dataset" }] };
  }
  try {
    const job = await submitJob({
      processId,
      steps: process.toSteps(parsed.data),
      inputs: parsed.data,
      datasetVersionId: latest.id,
      userId,
    });
    return { ok: true, job };
  } catch (error) {
    if (error instanceof QueueUnavailableError) return { ok: false, status: 503, title: "Queue unavailable", message: error.message };
    throw error;
  }
}

/**
 * A web process for the restart test: boots the app as the server does on its first request
 * (embedded queue and worker), submits one job per dataset version id given on the command
 * line, prints `{"submitted": [job ids]}` on one line and then keeps running until it is killed.
 */
import { boot } from "../../../app/.server/boot.server";
import { submitJob } from "../../../app/.server/jobs.server";

await boot();
const ids: string[] = [];
for (const versionId of process.argv.slice(2)) {
  const job = await submitJob({ processId: "fit", steps: [{ step: "fit", params: { tolerance: 2 } }], inputs: { formats: ["geojson"] }, datasetVersionId: versionId, userId: null });
  ids.push(job.id);
}
process.stdout.write(`${JSON.stringify({ submitted: ids })}\n`);
setInterval(() => undefined, 60_000);

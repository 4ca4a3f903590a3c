/**
 * A step runner for fault tests: the real one (jobs/steps), except on the input features named
 * in the JSON file at LISSOM_TEST_FAULTS, read on every call so a test can change it while a
 * job runs: `{ "throwAt": [3] }` makes the step throw on feature 3 (a bug in a step meeting one
 * odd feature); `{ "exitAt": [5] }` ends the runner thread on feature 5 (a crash of the thread,
 * such as running out of memory). Without the file, the real steps run unchanged.
 */
import { existsSync, readFileSync } from "node:fs";
import { runFeatureStep as realStep } from "../../../jobs/steps";

interface Faults {
  throwAt?: number[];
  exitAt?: number[];
}

function faults(): Faults {
  const path = process.env.LISSOM_TEST_FAULTS;
  if (!path || !existsSync(path)) return {};
  return JSON.parse(readFileSync(path, "utf8")) as Faults;
}

export function runFeatureStep(...args: Parameters<typeof realStep>): ReturnType<typeof realStep> {
  const index = args[3];
  const f = faults();
  if (f.exitAt?.includes(index)) process.exit(70);
  if (f.throwAt?.includes(index)) throw new TypeError(`simulated fault: step ${args[0]} cannot handle feature ${index}`);
  return realStep(...args);
}

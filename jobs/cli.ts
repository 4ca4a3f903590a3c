/**
 * The command line: the same step runners as the worker, over GeoJSON files.
 *
 *   lissom fit --input IN --output OUT --tolerance METRES [--corner-angle DEG] [--crs CODE] [--report REPORT.json]
 *   lissom elevate --input IN --output OUT --degree N [--crs CODE] [--report REPORT.json]
 *   lissom discretise --input IN --output OUT --tolerance METRES [--crs CODE] [--report REPORT.json]
 *
 * Exit status: 0 done; 1 bad input (one line on stderr: file, feature index, reason); 2 bad usage.
 */
import { writeFile } from "node:fs/promises";
import { parseArgs } from "node:util";
import { describeCrs, normaliseCode } from "../app/geometry/crs";
import { DEFAULT_CORNER_ANGLE } from "../app/geometry/fit";
import { InputError, readFeatureFile, writeFeatureFile } from "./steps/geojson-io";
import { runFeatureStep, type FeatureReport, type StepName } from "./steps/index";

const USAGE = `usage:
  lissom fit --input IN --output OUT --tolerance METRES [--corner-angle DEG] [--crs CODE] [--report REPORT.json]
  lissom elevate --input IN --output OUT --degree N [--crs CODE] [--report REPORT.json]
  lissom discretise --input IN --output OUT --tolerance METRES [--crs CODE] [--report REPORT.json]`;

const SAFETY =
  "Curves and polylines approximate the input within the stated tolerance. Not for legal boundary definition or for locating buried utilities; defer to local survey codes and licensed surveyors.";

class UsageError extends Error {}

function number(value: string | undefined, name: string, check: (v: number) => boolean, what: string): number {
  if (value === undefined) throw new UsageError(`--${name} is required`);
  const v = Number(value);
  if (value.trim() === "" || !Number.isFinite(v) || !check(v)) throw new UsageError(`--${name} must be ${what}, got "${value}"`);
  return v;
}

export async function main(argv: string[]): Promise<number> {
  let step: StepName;
  let values: Record<string, string | undefined>;
  try {
    const [command, ...rest] = argv;
    if (command === "--help" || command === "-h" || command === "help") {
      process.stdout.write(`${USAGE}\n`);
      return 0;
    }
    if (command !== "fit" && command !== "elevate" && command !== "discretise") throw new UsageError(command ? `unknown command "${command}"` : "no command given");
    step = command;
    const parsed = parseArgs({
      args: rest,
      options: {
        input: { type: "string" },
        output: { type: "string" },
        tolerance: { type: "string" },
        "corner-angle": { type: "string" },
        degree: { type: "string" },
        crs: { type: "string" },
        report: { type: "string" },
      },
      strict: true,
      allowPositionals: false,
    });
    values = parsed.values as Record<string, string | undefined>;
    if (!values.input) throw new UsageError("--input is required");
    if (!values.output) throw new UsageError("--output is required");
    if (step !== "fit" && values["corner-angle"] !== undefined) throw new UsageError(`--corner-angle applies to fit only`);
    if (step !== "elevate" && values.degree !== undefined) throw new UsageError(`--degree applies to elevate only`);
    if (step === "elevate" && values.tolerance !== undefined) throw new UsageError(`--tolerance does not apply to elevate`);
  } catch (e) {
    const msg = e instanceof UsageError || (e as { code?: string }).code?.startsWith("ERR_PARSE_ARGS") ? (e as Error).message : String(e);
    process.stderr.write(`lissom: ${msg.split("\n")[0]}\n${USAGE}\n`);
    return 2;
  }

  let params: Record<string, number>;
  try {
    if (step === "elevate") params = { degree: number(values.degree, "degree", (v) => Number.isInteger(v) && v >= 1 && v <= 64, "an integer from 1 to 64") };
    else params = { tolerance: number(values.tolerance, "tolerance", (v) => v > 0, "a positive number of metres") };
    if (step === "fit") {
      params.cornerAngle = values["corner-angle"] === undefined ? DEFAULT_CORNER_ANGLE : number(values["corner-angle"], "corner-angle", (v) => v >= 0 && v <= 180, "a number of degrees from 0 to 180");
    }
  } catch (e) {
    process.stderr.write(`lissom: ${(e as Error).message}\n`);
    return 2;
  }

  const input = values.input!;
  const output = values.output!;
  try {
    const { crsCode: fileCrs, features } = await readFeatureFile(input);
    const code = normaliseCode(values.crs ?? fileCrs ?? "EPSG:4326");
    let kind;
    try {
      kind = describeCrs(code);
    } catch (e) {
      if (values.crs) {
        process.stderr.write(`lissom: --crs: ${(e as Error).message}\n`);
        return 2;
      }
      throw new InputError(input, null, `the file's crs member: ${(e as Error).message}; pass --crs`);
    }
    const crs = { code };
    const reports: FeatureReport[] = [];
    const started = Date.now();
    let lastProgress = started;
    const total = features.length;
    const progress = (done: number, final = false) => {
      const now = Date.now();
      if (!final && now - lastProgress < 1000) return;
      if (now - started < 1000) return;
      lastProgress = now;
      process.stderr.write(`lissom ${step}: ${done}/${total} features (${Math.round((done / Math.max(1, total)) * 100)}%)\n`);
    };
    const results: object[] = [];
    for (let i = 0; i < total; i++) {
      const r = runFeatureStep(step, params as never, features[i], i, crs);
      if (r.report.status === "error") {
        const reason = r.report.reason ?? "invalid feature";
        const hint = kind.kind === "geographic" && /outside the longitude\/latitude range/.test(reason) && !values.crs && !fileCrs ? "; these coordinates are not WGS84 longitude/latitude: pass --crs with the dataset's CRS" : "";
        throw new InputError(input, i, reason + hint);
      }
      reports.push(r.report);
      results.push(r.feature);
      progress(i + 1);
    }
    progress(total, true);
    const members: Record<string, unknown> = {
      lissom: { step, ...params, units: step === "elevate" ? undefined : "metres", crs: code, note: SAFETY },
    };
    await writeFeatureFile(output, results, { crsCode: code, members });
    if (values.report) await writeFile(values.report, `${JSON.stringify(makeReport(step, params, code, input, output, reports), null, 2)}\n`);
    return 0;
  } catch (e) {
    if (e instanceof InputError) {
      process.stderr.write(`lissom: ${e.message}\n`);
      return 1;
    }
    const err = e as NodeJS.ErrnoException;
    if (err && typeof err.code === "string" && err.syscall) {
      process.stderr.write(`lissom: ${err.path ?? output}: cannot write (${err.code})\n`);
      return 1;
    }
    throw e;
  }
}

function makeReport(step: StepName, params: Record<string, number>, crs: string, input: string, output: string, reports: FeatureReport[]) {
  const count = (s: FeatureReport["status"]) => reports.filter((r) => r.status === s).length;
  const verticesIn = reports.reduce((a, r) => a + r.verticesIn, 0);
  const segmentsOut = reports.reduce((a, r) => a + r.segmentsOut, 0);
  // RMS over all features, weighted by vertices in.
  const sumSq = reports.reduce((a, r) => a + r.rmsDeviation ** 2 * r.verticesIn, 0);
  return {
    step,
    params,
    crs,
    input,
    output,
    totals: {
      features: reports.length,
      ok: count("ok"),
      repaired: count("repaired"),
      skipped: count("skipped"),
      error: count("error"),
      verticesIn,
      segmentsOut,
      maxDeviation: reports.reduce((a, r) => Math.max(a, r.maxDeviation), 0),
      rmsDeviation: verticesIn > 0 ? Math.sqrt(sumSq / verticesIn) : 0,
    },
    features: reports,
  };
}

const isMain = import.meta.url === `file://${process.argv[1]}` || /jobs[\\/]cli\.ts$/.test(process.argv[1] ?? "");
if (isMain) {
  main(process.argv.slice(2)).then(
    (code) => process.exit(code),
    (e) => {
      process.stderr.write(`lissom: internal error: ${(e as Error)?.stack ?? String(e)}\n`);
      process.exit(70);
    },
  );
}

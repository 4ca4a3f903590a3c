/**
 * The command line: the same step runners and format readers/writers as the worker. Input is
 * any format the datasets area accepts (GeoJSON, newline-delimited GeoJSON, GeoJSON text
 * sequences, a zipped Shapefile or a loose .shp with its parts); the output format follows the
 * output's extension (.geojson .ndjson .zip .gml .svg .csv).
 *
 *   lissom fit --input IN --output OUT --tolerance METRES [--corner-angle DEG] [--crs CODE] [--report REPORT.json]
 *   lissom elevate --input IN --output OUT --degree N [--crs CODE] [--report REPORT.json]
 *   lissom discretise --input IN --output OUT --tolerance METRES [--crs CODE] [--report REPORT.json]
 *
 * Exit status: 0 done; 1 bad input (one line on stderr: file, feature index, reason); 2 bad usage.
 */
import { readdir, stat, writeFile } from "node:fs/promises";
import { basename, dirname, join } from "node:path";
import { parseArgs } from "node:util";
import { describeCrs, normaliseCode } from "../app/geometry/crs";
import { DEFAULT_CORNER_ANGLE } from "../app/geometry/fit";
import { DatasetInputError, OUTPUT_EXTENSIONS, inspectDataset, keepInputGeometry, outputFormatForPath, readFeatures, wantsInputLayer, writeOutput } from "../app/formats";
import { runFeatureStep, type FeatureReport, type StepName } from "./steps/index";

const USAGE = `usage:
  lissom fit --input IN --output OUT --tolerance METRES [--corner-angle DEG] [--crs CODE] [--report REPORT.json]
  lissom elevate --input IN --output OUT --degree N [--crs CODE] [--report REPORT.json]
  lissom discretise --input IN --output OUT --tolerance METRES [--crs CODE] [--report REPORT.json]`;

const SAFETY =
  "Curves and polylines approximate the input within the stated tolerance. Not for legal boundary definition or for locating buried utilities; defer to local survey codes and licensed surveyors.";

class UsageError extends Error {}

/** A feature the step refused: the file, the feature index and the reason, on one line. */
class InputError extends Error {
  constructor(file: string, featureIndex: number | null, reason: string) {
    super(`${file}: ${featureIndex === null ? "" : `feature ${featureIndex}: `}${reason}`);
  }
}

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
  const format = outputFormatForPath(output);
  if (!format) {
    process.stderr.write(`lissom: --output: cannot tell the format from "${output}"; end it in ${Object.values(OUTPUT_EXTENSIONS).join(", ")}\n`);
    return 2;
  }
  if (values.crs) {
    try {
      describeCrs(normaliseCode(values.crs));
    } catch (e) {
      process.stderr.write(`lissom: --crs: ${(e as Error).message}\n`);
      return 2;
    }
  }
  try {
    const files = await inputFiles(input);
    const readOptions = values.crs ? { crs: normaliseCode(values.crs) } : {};
    // One streaming pass to check the whole file and learn its CRS, one to run the step.
    const summary = await inspectDataset(files, readOptions);
    const code = summary.crs.code;
    const crs = { code };
    const reports: FeatureReport[] = [];
    const started = Date.now();
    let lastProgress = started;
    const total = summary.features;
    const progress = (done: number, final = false) => {
      const now = Date.now();
      if (!final && now - lastProgress < 1000) return;
      if (now - started < 1000) return;
      lastProgress = now;
      process.stderr.write(`lissom ${step}: ${done}/${total} features (${Math.round((done / Math.max(1, total)) * 100)}%)\n`);
    };
    const inputLayer = wantsInputLayer([format]);
    async function* results() {
      let done = 0;
      for await (const { index, feature } of readFeatures(files, readOptions)) {
        const r = runFeatureStep(step, params as never, feature, index, crs);
        if (r.report.status === "error") throw new InputError(input, index, r.report.reason ?? "invalid feature");
        reports.push(r.report);
        if (inputLayer) keepInputGeometry(r.feature, feature);
        yield r.feature;
        progress(++done);
      }
      progress(done, true);
    }
    await writeOutput(format, results(), output, {
      tolerance_m: step === "elevate" ? null : params.tolerance,
      steps: [{ step, params }],
      source: { file: basename(input) },
      crs: code,
      ...(summary.crs.wkt ? { crsWkt: summary.crs.wkt } : {}),
      caution: SAFETY,
      title: basename(input),
    });
    if (values.report) await writeFile(values.report, `${JSON.stringify(makeReport(step, params, code, input, output, reports), null, 2)}\n`);
    return 0;
  } catch (e) {
    if (e instanceof DatasetInputError) {
      process.stderr.write(`lissom: ${e.message.replace(/\bthe crs option\b/g, "--crs")}\n`);
      return 1;
    }
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

/**
 * The files of one input: the file itself, or for a loose Shapefile (.shp) the parts beside it
 * with the same base name (.shx, .dbf, .prj, .cpg).
 */
async function inputFiles(path: string): Promise<{ path: string; name: string }[]> {
  const name = basename(path);
  try {
    await stat(path);
  } catch {
    throw new InputError(path, null, "file not found");
  }
  if (!/\.shp$/i.test(name)) return [{ path, name }];
  const dir = dirname(path);
  const stem = name.slice(0, -4).toLowerCase();
  const parts = (await readdir(dir)).filter((f) => /\.(shp|shx|dbf|prj|cpg)$/i.test(f) && f.slice(0, -4).toLowerCase() === stem);
  return parts.map((f) => ({ path: join(dir, f), name: f }));
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

/**
 * Format layer benchmark: reads and writes a generated dataset of 2 million vertices (set
 * LISSOM_BENCH_VERTICES to change it) in every format, printing vertices per second and peak
 * memory per phase, and GeoJSON reading throughput as a ratio to plain `JSON.parse` of the same
 * file in this same process (target ≥ 0.5×). Streaming phases should stay under 300 MB peak
 * resident memory whatever the input size; `JSON.parse` of the whole file is the reference
 * that does not.
 *
 * The dataset is made here with a seeded generator: random-walk lines of 200 vertices near the
 * invented town of Brindlewick, with cubic `curves` over consecutive vertices for the writers.
 * GML, SVG and CSV are output formats only, so they are written, not read. Each phase runs in
 * a fresh Node process, so a phase's peak memory is not inflated by the one before it.
 */
import { spawn } from "node:child_process";
import { createReadStream, readFileSync, statSync } from "node:fs";
import { mkdtemp, rm } from "node:fs/promises";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { fileURLToPath } from "node:url";
import { setFlagsFromString } from "node:v8";
import { runInNewContext } from "node:vm";
import { writeFile } from "node:fs/promises";
import { parseInBatches } from "@loaders.gl/core";
import shpwrite from "@mapbox/shp-write";
import { JSONLoader } from "@loaders.gl/json";
import { inspectDataset, readFeatures, writeOutput, type GeoJSONFeature, type OutputFormat } from "../../app/formats";

setFlagsFromString("--expose-gc");
const gc = runInNewContext("gc") as () => void;

const MB = 1024 * 1024;

/** mulberry32, a small seeded PRNG (public-domain, widely copied; common practice). */
function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

const PER_FEATURE = 200;

async function* generate(vertices: number, withCurves: boolean): AsyncGenerator<GeoJSONFeature> {
  const rnd = mulberry32(20240611);
  const features = Math.ceil(vertices / PER_FEATURE);
  for (let i = 0; i < features; i++) {
    let x = -27.35 + (rnd() - 0.5) * 0.1;
    let y = 47.85 + (rnd() - 0.5) * 0.1;
    let heading = rnd() * 2 * Math.PI;
    const coords: number[][] = [];
    for (let j = 0; j < PER_FEATURE; j++) {
      heading += (rnd() - 0.5) * 0.3;
      x += Math.cos(heading) * 5e-5;
      y += Math.sin(heading) * 5e-5;
      coords.push([Math.round(x * 1e7) / 1e7, Math.round(y * 1e7) / 1e7]);
    }
    const f: GeoJSONFeature = { type: "Feature", properties: { name: `Lane ${i}`, kind: i % 3 === 0 ? "road" : "track", lanes: 1 + (i % 3) }, geometry: { type: "LineString", coordinates: coords } };
    if (withCurves) {
      const segs: number[][][] = [];
      for (let k = 0; k + 3 < coords.length; k += 3) segs.push(coords.slice(k, k + 4));
      f.curves = [segs];
    }
    yield f;
  }
}

class MemorySampler {
  private timer?: NodeJS.Timeout;
  peakRss = 0;
  peakHeap = 0;
  start(): void {
    this.sample();
    this.timer = setInterval(() => this.sample(), 5);
  }
  sample(): void {
    const m = process.memoryUsage();
    this.peakRss = Math.max(this.peakRss, m.rss);
    this.peakHeap = Math.max(this.peakHeap, m.heapUsed + m.external + m.arrayBuffers);
  }
  stop(): void {
    this.sample();
    clearInterval(this.timer);
  }
}

interface Row {
  phase: string;
  vertices: number;
  ms: number;
  peakRss: number;
  peakHeap: number;
  bytes?: number;
}

async function measure(phase: string, run: () => Promise<{ vertices: number; bytes?: number }>): Promise<Row> {
  gc();
  await new Promise((r) => setTimeout(r, 20));
  const sampler = new MemorySampler();
  sampler.start();
  const t0 = performance.now();
  const r = await run();
  const ms = performance.now() - t0;
  sampler.stop();
  return { phase, vertices: r.vertices, ms, peakRss: sampler.peakRss, peakHeap: sampler.peakHeap, bytes: r.bytes };
}

async function countRead(path: string, name: string): Promise<{ vertices: number; bytes: number }> {
  let vertices = 0;
  for await (const { feature } of readFeatures([{ path, name }])) {
    const g = feature.geometry;
    if (g.type === "LineString") vertices += g.coordinates.length;
    else for (const p of g.coordinates) vertices += (p as unknown[]).length;
  }
  return { vertices, bytes: statSync(path).size };
}

type Phase = { name: string; run: (dir: string, N: number) => Promise<{ vertices: number; bytes?: number }> };

const meta = { tolerance_m: 1, steps: [{ step: "fit", params: { tolerance: 1 } }], source: { dataset: "bench" } };
const OUTPUTS: [OutputFormat, string][] = [
  ["geojson", "out.geojson"],
  ["ndjson", "out.ndjson"],
  ["shapefile", "out.zip"],
  ["gml", "out.gml"],
  ["svg", "out.svg"],
  ["csv", "out.csv"],
];

const PHASES: Phase[] = [
  { name: "write geojson (input, no curves)", run: (dir, N) => writeOutput("geojson", generate(N, false), join(dir, "input.geojson"), meta) },
  ...OUTPUTS.map(([format, file]): Phase => ({ name: `write ${format} (with curves)`, run: (dir, N) => writeOutput(format, generate(N, true), join(dir, file), meta) })),
  { name: "read geojson (readFeatures)", run: (dir) => countRead(join(dir, "input.geojson"), "input.geojson") },
  {
    name: "read geojson (inspectDataset)",
    run: async (dir) => {
      const summary = await inspectDataset([{ path: join(dir, "input.geojson"), name: "input.geojson" }]);
      return { vertices: summary.vertices, bytes: statSync(join(dir, "input.geojson")).size };
    },
  },
  { name: "read ndjson", run: (dir) => countRead(join(dir, "out.ndjson"), "out.ndjson") },
  { name: "read shapefile (.zip)", run: (dir) => countRead(join(dir, "out.zip"), "out.zip") },
  {
    name: "reference: JSON.parse whole file",
    run: async (dir) => {
      const input = join(dir, "input.geojson");
      const doc = JSON.parse(readFileSync(input, "utf8")) as { features: GeoJSONFeature[] };
      let vertices = 0;
      for (const f of doc.features) vertices += (f.geometry.coordinates as unknown[]).length;
      return { vertices, bytes: statSync(input).size };
    },
  },
  {
    name: "reference: @loaders.gl/json streaming",
    run: async (dir) => {
      const input = join(dir, "input.geojson");
      let vertices = 0;
      const batches = await parseInBatches(createReadStream(input), JSONLoader, { json: { jsonpaths: ["$.features"] } } as never);
      for await (const batch of batches as AsyncIterable<{ data: GeoJSONFeature[] }>) {
        for (const f of batch.data ?? []) vertices += (f.geometry.coordinates as unknown[]).length;
      }
      return { vertices, bytes: statSync(input).size };
    },
  },
  // The widely used npm Shapefile writer takes the whole FeatureCollection and builds every file
  // in memory, growing its arrays feature by feature; it is the reference for why Lissom writes
  // .shp/.shx itself. Its time grows about quadratically (2 M vertices ran for over ten minutes
  // at 2.8 GB), so it runs on 1/200 and 1/50 of the dataset.
  ...[200, 50].map((part): Phase => ({
    name: `reference: @mapbox/shp-write, 1/${part} of the data`,
    run: async (dir, N) => {
      const features: GeoJSONFeature[] = [];
      for await (const f of generate(Math.round(N / part), false)) features.push(f);
      const zip = (await shpwrite.zip({ type: "FeatureCollection", features } as never, { outputType: "nodebuffer", compression: "DEFLATE" } as never)) as unknown as Buffer;
      await writeFile(join(dir, `reference-shp-write-${part}.zip`), zip);
      let vertices = 0;
      for (const f of features) vertices += (f.geometry.coordinates as unknown[]).length;
      return { vertices, bytes: zip.length };
    },
  })),
];

/** Runs one phase in a fresh Node process (same loader flags), so each peak memory is its own. */
function runPhaseProcess(index: number, dir: string, N: number): Promise<Row> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, [...process.execArgv, fileURLToPath(import.meta.url), "--phase", String(index), dir, String(N)], { stdio: ["ignore", "pipe", "inherit"] });
    let out = "";
    child.stdout.on("data", (d) => (out += d));
    child.on("error", reject);
    child.on("close", (code) => {
      const line = out.split("\n").find((l) => l.startsWith("RESULT "));
      if (code !== 0 || !line) return reject(new Error(`phase "${PHASES[index]!.name}" failed (exit ${code}): ${out}`));
      resolve(JSON.parse(line.slice(7)) as Row);
    });
  });
}

async function childMain(index: number, dir: string, N: number): Promise<void> {
  const phase = PHASES[index]!;
  const row = await measure(phase.name, () => phase.run(dir, N));
  process.stdout.write(`RESULT ${JSON.stringify(row)}\n`);
}

export default async function formatsBench(): Promise<void> {
  const N = Number(process.env.LISSOM_BENCH_VERTICES ?? 2_000_000);
  const dir = await mkdtemp(join(tmpdir(), "lissom-bench-formats-"));
  const rows: Row[] = [];
  try {
    console.log(`dataset: ${N.toLocaleString("en")} vertices in ${Math.ceil(N / PER_FEATURE).toLocaleString("en")} lines of ${PER_FEATURE}; each phase in its own process`);
    for (let i = 0; i < PHASES.length; i++) rows.push(await runPhaseProcess(i, dir, N));
    const parseRow = rows.find((r) => r.phase === "reference: JSON.parse whole file")!;
    const loadersRow = rows.find((r) => r.phase === "reference: @loaders.gl/json streaming")!;
    const pad = (t: string, n: number) => t.padEnd(n);
    console.log(`${pad("phase", 52)} ${"vertices/s".padStart(12)} ${"time s".padStart(8)} ${"MB/s".padStart(7)} ${"peak RSS MB".padStart(12)} ${"peak heap MB".padStart(13)}`);
    for (const r of rows) {
      const vps = r.vertices / (r.ms / 1000);
      const mbs = r.bytes ? (r.bytes / MB / (r.ms / 1000)).toFixed(1) : "";
      console.log(`${pad(r.phase, 52)} ${Math.round(vps).toLocaleString("en").padStart(12)} ${(r.ms / 1000).toFixed(2).padStart(8)} ${mbs.padStart(7)} ${(r.peakRss / MB).toFixed(0).padStart(12)} ${(r.peakHeap / MB).toFixed(0).padStart(13)}`);
    }
    const ours = rows.find((r) => r.phase === "read geojson (readFeatures)")!;
    const ratio = parseRow.ms / ours.ms;
    const loadersRatio = parseRow.ms / loadersRow.ms;
    const streaming = rows.filter((r) => !r.phase.startsWith("reference"));
    const worst = streaming.reduce((a, r) => (r.peakRss > a.peakRss ? r : a));
    console.log(`GeoJSON reading vs JSON.parse (same file, same run; both include reading the file): ${ratio.toFixed(2)}× (target ≥ 0.5×); @loaders.gl/json streaming: ${loadersRatio.toFixed(2)}×`);
    const ourShp = rows.find((r) => r.phase === "write shapefile (with curves)")!;
    const [refSmall, refLarge] = [200, 50].map((part) => rows.find((r) => r.phase === `reference: @mapbox/shp-write, 1/${part} of the data`)!);
    const vps = (r: Row) => r.vertices / (r.ms / 1000);
    console.log(
      `zipped Shapefile: Lissom's streaming writer at ${ourShp.vertices.toLocaleString("en")} vertices runs ${(vps(ourShp) / vps(refLarge!)).toFixed(1)}× the vertices/s of @mapbox/shp-write at ${refLarge!.vertices.toLocaleString("en")}; ` +
        `that writer's time grew ${(refLarge!.ms / refSmall!.ms).toFixed(1)}× for 4× the data (from ${refSmall!.vertices.toLocaleString("en")} vertices)`,
    );
    console.log(`peak resident memory of the streaming phases: ${(worst.peakRss / MB).toFixed(0)} MB in "${worst.phase}" (target < 300 MB); JSON.parse reference: ${(parseRow.peakRss / MB).toFixed(0)} MB`);
    const expected = Math.ceil(N / PER_FEATURE) * PER_FEATURE;
    const checks = rows.filter((r) => r.phase.startsWith("read") || (r.phase.startsWith("reference") && !r.phase.includes("shp-write"))).every((r) => r.vertices === expected);
    console.log(`every reader saw all ${expected.toLocaleString("en")} vertices: ${checks ? "yes" : "NO"}`);
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

if (process.argv[2] === "--phase") await childMain(Number(process.argv[3]), process.argv[4]!, Number(process.argv[5]));

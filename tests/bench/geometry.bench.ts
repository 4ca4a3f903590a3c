// Geometry benchmark: ratios against references measured in this process, on the same data.
// Dense noisy traces: the Brindlewick generator (samples/generate.ts). Sparse real lines: the
// longest US state border arcs from us-atlas, projected with proj4 (Albers, from memory).
import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import fitCurve from "fit-curve";
import proj4 from "proj4";
import simplify from "simplify-js";
import { mesh } from "topojson-client";
import { discretiseSegment, wangSegmentCount } from "../../app/geometry/discretise";
import { fit } from "../../app/geometry/fit";
import { hausdorff } from "../../app/geometry/measure";
import { pieceChordDeviation } from "../../app/geometry/discretise";
import { subSegment } from "../../app/geometry/bezier";
import type { Point, Segment } from "../../app/geometry/types";
import { generateTown } from "../../samples/generate";

function sparseLines(): Point[][] {
  const require = createRequire(import.meta.url);
  const topo = JSON.parse(readFileSync(require.resolve("us-atlas/states-10m.json"), "utf8"));
  const albers = "+proj=aea +lat_0=23 +lon_0=-96 +lat_1=29.5 +lat_2=45.5 +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs";
  return (mesh(topo, topo.objects.states, (a: unknown, b: unknown) => a !== b).coordinates as number[][][])
    .map((l) => l.map((p) => proj4("WGS84", albers, p) as Point))
    .sort((a, b) => b.length - a.length)
    .slice(0, 40);
}

function compare(name: string, lines: { pts: Point[]; closed: boolean }[], tol: number) {
  let verts = 0, ours = 0, theirs = 0, dp = 0, tOurs = 0, tTheirs = 0, oursOver = 0, theirsOver = 0, worstOurs = 0, worstTheirs = 0;
  for (const { pts, closed } of lines) {
    verts += pts.length;
    let t = performance.now();
    const r = fit(pts, { tolerance: tol, closed });
    tOurs += performance.now() - t;
    t = performance.now();
    const fcs = fitCurve(pts as [number, number][], tol * tol) as Segment[];
    tTheirs += performance.now() - t;
    ours += r.segments.length;
    theirs += fcs.length;
    dp += simplify(pts.map(([x, y]) => ({ x, y })), tol, true).length;
    const ho = hausdorff(pts, r.segments, tol * 1e-3).value / tol;
    const ht = hausdorff(pts, fcs, tol * 1e-2).value / tol;
    worstOurs = Math.max(worstOurs, ho);
    worstTheirs = Math.max(worstTheirs, ht);
    if (ho > 1) oursOver++;
    if (ht > 1) theirsOver++;
  }
  console.log(
    `${name} tol ${tol} m: ${lines.length} parts, ${verts} vertices | segments ours/fit-curve ${(ours / theirs).toFixed(3)} (${ours}/${theirs}) | ours/DP kept vertices ${(ours / dp).toFixed(3)} (${dp}) | vertices/s ours/fit-curve ${(tTheirs / tOurs).toFixed(2)} | worst deviation/tol ours ${worstOurs.toFixed(3)}, fit-curve ${worstTheirs.toFixed(3)} | parts over tol ours ${oursOver}, fit-curve ${theirsOver}`,
  );
}

function uniformCount(seg: Segment, tol: number): number {
  // Fewest equal parameter steps whose chords all pass the exact test.
  for (let n = 1; n < 100000; n = Math.ceil(n * 1.05 + 1)) {
    let ok = true;
    for (let i = 0; i < n && ok; i++) if (pieceChordDeviation(subSegment(seg, i / n, (i + 1) / n), tol) < 0) ok = false;
    if (ok) return n;
  }
  return Infinity;
}

export default async function bench(): Promise<void> {
  const town = generateTown();
  const dense = town.features.map((f) => ({ pts: f.trace.points as Point[], closed: f.truth.closed }));
  for (const tol of [4, 6, 10]) compare("dense noisy traces", dense, tol);
  const sparse = sparseLines().map((pts) => ({ pts, closed: false }));
  for (const tol of [10, 50, 200]) compare("sparse real lines", sparse, tol);

  // Discretise vs Wang's formula and uniform steps, on the fitted river at 6 m.
  const river = town.features.find((f) => f.kind === "river")!;
  const segs = fit(river.trace.points, { tolerance: 6 }).segments;
  for (const tol of [0.1, 0.5, 2]) {
    let ours = 0, wang = 0, uni = 0;
    for (const s of segs) {
      ours += discretiseSegment(s, tol).points.length - 1;
      wang += wangSegmentCount(s, tol);
      uni += uniformCount(s, tol);
    }
    console.log(`discretise tol ${tol} m: edges ours/Wang ${(ours / wang).toFixed(3)} (${ours}/${wang}), ours/uniform ${(ours / uni).toFixed(3)} (${uni})`);
  }
  console.log(`peak memory (RSS): ${(process.memoryUsage().rss / 2 ** 20).toFixed(0)} MiB`);
}

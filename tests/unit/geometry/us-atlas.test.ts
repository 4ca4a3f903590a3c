// A real open dataset: US Census state boundaries from the us-atlas npm package (TopoJSON,
// 1:10m), converted with topojson-client and projected with proj4 to a conic equal-area
// projection in metres (Albers, standard parallels 29.5° and 45.5°, parameters from memory).
// Subset for runtime: the 60 longest shared border arcs (by vertex count).
import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import proj4 from "proj4";
import { mesh } from "topojson-client";
import { describe, expect, it } from "vitest";
import { fit } from "../../../app/geometry/fit";
import { hausdorff } from "../../../app/geometry/measure";
import type { Point } from "../../../app/geometry/types";

const require = createRequire(import.meta.url);
const topo = JSON.parse(readFileSync(require.resolve("us-atlas/states-10m.json"), "utf8"));
const albers = "+proj=aea +lat_0=23 +lon_0=-96 +lat_1=29.5 +lat_2=45.5 +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs";
const lines = (mesh(topo, topo.objects.states, (a: unknown, b: unknown) => a !== b).coordinates as number[][][])
  .map((l) => l.map((p) => proj4("WGS84", albers, p) as Point))
  .sort((a, b) => b.length - a.length)
  .slice(0, 60);

describe("US state borders (us-atlas 3.0.1), projected with proj4", () => {
  for (const tol of [10, 50, 200]) {
    it(`every fitted part within ${tol} m both ways, along the edges too`, () => {
      for (const pts of lines) {
        const r = fit(pts, { tolerance: tol });
        const h = hausdorff(pts, r.segments, tol * 5e-4);
        expect(h.pathToPolyline).toBeLessThanOrEqual(tol);
        expect(h.polylineToPath).toBeLessThanOrEqual(tol);
        expect(r.segments.length).toBeLessThanOrEqual(pts.length - 1);
      }
    });
  }
});

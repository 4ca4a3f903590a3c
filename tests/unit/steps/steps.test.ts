import proj4 from "proj4";
import { describe, expect, it } from "vitest";
import { discretisePath } from "../../../app/geometry/discretise";
import { hausdorff } from "../../../app/geometry/measure";
import type { Point, Segment } from "../../../app/geometry/types";
import { runFeatureStep } from "../../../jobs/steps/index";
import { generateTown } from "../../../samples/generate";

const WGS = { code: "EPSG:4326" };

describe("runFeatureStep", () => {
  const town = generateTown();
  const river = town.features.find((f) => f.kind === "river")!;
  const feature = { type: "Feature", id: "r1", properties: { name: river.name }, geometry: { type: "LineString", coordinates: river.wgs84 } };

  it("fit on WGS84 input keeps ground tolerance (checked in a transverse Mercator from proj4, RFC 7946 coordinates)", () => {
    const { feature: out, report } = runFeatureStep("fit", { tolerance: 6 }, feature, 0, WGS);
    const o = out as { properties: unknown; id: unknown; geometry: { type: string; coordinates: number[][] }; curves: Segment[][] };
    // The trace repeats some fixes (duplicate vertices): dropped and reported as a repair.
    expect(report.status).toBe("repaired");
    expect(report.reason).toMatch(/duplicate/);
    expect(o.properties).toEqual(feature.properties);
    expect(o.id).toBe("r1");
    expect(o.geometry.type).toBe("LineString");
    expect(o.curves).toHaveLength(1);
    expect(report.maxDeviation).toBeLessThanOrEqual(6);
    const tm = `+proj=tmerc +lat_0=${town.origin.lat} +lon_0=${town.origin.lon} +k=1 +ellps=WGS84 +units=m`;
    const toM = (p: number[]) => proj4("WGS84", tm, [p[0], p[1]]) as Point;
    // The curves are Béziers in longitude/latitude; densify them finely before projecting.
    const dense = discretisePath(o.curves[0], 1e-7).points.map(toM);
    const input = river.wgs84.map(toM);
    expect(hausdorff(input, dense.slice(1).map((p, i) => [dense[i], [(2 * dense[i][0] + p[0]) / 3, (2 * dense[i][1] + p[1]) / 3], [(dense[i][0] + 2 * p[0]) / 3, (dense[i][1] + 2 * p[1]) / 3], p] as Segment), 0.01).value).toBeLessThanOrEqual(6 + 0.05);
    // End points exact.
    expect(o.curves[0][0][0]).toEqual(river.wgs84[0]);
  });

  it("polygons and multipolygons keep their type, rings closed, one curves part per ring", () => {
    const sq = (x: number) => [[x, 0], [x + 0.01, 0], [x + 0.01, 0.01], [x, 0.01], [x, 0]];
    const mp = { type: "Feature", properties: {}, geometry: { type: "MultiPolygon", coordinates: [[sq(0)], [sq(1), sq(1.002)]] } };
    const r = runFeatureStep("fit", { tolerance: 1 }, mp, 3, WGS);
    const g = (r.feature as { geometry: { type: string; coordinates: number[][][][] }; curves: unknown[] }).geometry;
    expect(g.type).toBe("MultiPolygon");
    expect(g.coordinates).toHaveLength(2);
    expect(g.coordinates[1]).toHaveLength(2);
    for (const poly of g.coordinates) for (const ring of poly) expect(ring[ring.length - 1]).toEqual(ring[0]);
    expect((r.feature as { curves: unknown[] }).curves).toHaveLength(3);
  });

  it("elevate is exact, discretise follows the tolerance, and bad input is a report, not a throw", () => {
    const fitted = runFeatureStep("fit", { tolerance: 5 }, feature, 0, WGS).feature;
    const e = runFeatureStep("elevate", { degree: 5 }, fitted, 0, WGS);
    expect(e.report.maxDeviation).toBe(0);
    expect((e.feature as { curves: Segment[][] }).curves[0][0]).toHaveLength(6);
    const d = runFeatureStep("discretise", { tolerance: 1 }, e.feature, 0, WGS);
    expect(d.report.status).toBe("ok");
    expect(d.report.maxDeviation).toBeLessThanOrEqual(1);
    const bad = runFeatureStep("fit", { tolerance: 5 }, { type: "Feature", properties: {}, geometry: { type: "LineString", coordinates: [[0, 0], ["x", 1]] } }, 9, WGS);
    expect(bad.report).toMatchObject({ index: 9, status: "error" });
    const out = runFeatureStep("fit", { tolerance: 5 }, { type: "Feature", properties: {}, geometry: { type: "LineString", coordinates: [[500000, 0], [1, 1]] } }, 2, WGS);
    expect(out.report.reason).toMatch(/outside the longitude\/latitude range/);
    const pt = runFeatureStep("fit", { tolerance: 5 }, { type: "Feature", properties: {}, geometry: { type: "Point", coordinates: [0, 0] } }, 1, WGS);
    expect(pt.report.status).toBe("skipped");
    const noCurves = runFeatureStep("discretise", { tolerance: 1 }, feature, 0, WGS);
    expect(noCurves.report.status).toBe("skipped");
  });
});

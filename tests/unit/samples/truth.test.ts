// The ground truth itself: joined segments, smooth joints G1, corners real, rings closed.
import { describe, expect, it } from "vitest";
import { type XY, densify, readTruth } from "./helpers";

const truth = readTruth();
const sub = (a: XY, b: XY): XY => [a[0] - b[0], a[1] - b[1]];
const cross = (a: XY, b: XY) => a[0] * b[1] - a[1] * b[0];
const dot = (a: XY, b: XY) => a[0] * b[0] + a[1] * b[1];
const norm = (a: XY) => Math.hypot(a[0], a[1]);

describe("ground truth of the invented town", () => {
  it("says it is invented and names the projection", () => {
    expect(truth.town).toBe("Brindlewick");
    expect(truth.invented).toBe(true);
    expect(truth.projection).toMatch(/^\+proj=tmerc /);
    expect(truth.projection).toContain(`+lat_0=${truth.origin.lat}`);
    expect(truth.projection).toContain(`+lon_0=${truth.origin.lon}`);
  });

  for (const f of truth.features) {
    it(`${f.name}: segments join, smooth joints are G1, corners turn`, () => {
      const segs = f.segments_local_m as XY[][];
      const joints = f.closed ? segs.length : segs.length - 1;
      for (let j = f.closed ? 0 : 1; j <= joints - (f.closed ? 1 : 0); j++) {
        const before = segs[(j - 1 + segs.length) % segs.length];
        const after = segs[j % segs.length];
        expect(after[0], `${f.name} joint ${j} joins exactly`).toEqual(before[3]);
        const tin = sub(before[3], before[2]);
        const tout = sub(after[1], after[0]);
        const sinAngle = cross(tin, tout) / (norm(tin) * norm(tout));
        const cosAngle = dot(tin, tout) / (norm(tin) * norm(tout));
        if (f.corners.includes(j)) {
          // A true corner: the direction turns by more than 30 degrees.
          expect(cosAngle, `${f.name} corner ${j}`).toBeLessThan(Math.cos(Math.PI / 6));
        } else {
          // G1: the handles either side of the joint are collinear and point the same way.
          expect(Math.abs(sinAngle), `${f.name} joint ${j} collinear`).toBeLessThan(1e-9);
          expect(cosAngle, `${f.name} joint ${j} same direction`).toBeGreaterThan(0);
        }
      }
      if (f.closed) expect(segs[segs.length - 1][3]).toEqual(segs[0][0]);
    });
  }

  it("has true corners on some roads and none on the river or the shore", () => {
    const byName = new Map(truth.features.map((f) => [f.name, f]));
    expect(byName.get("High Street")!.corners.length).toBe(1);
    expect(byName.get("Kiln Lane")!.corners.length).toBe(2);
    expect(byName.get("The Ridgeway")!.corners).toEqual([]);
    expect(byName.get("River Sallow")!.corners).toEqual([]);
    expect(byName.get("Tarnell Mere")!.corners).toEqual([]);
  });

  it("has a long winding river with many bends", () => {
    const river = truth.features.find((f) => f.kind === "river")!;
    const line = densify(river.segments_local_m as XY[][], 32);
    let length = 0;
    let bends = 0;
    let lastSign = 0;
    for (let i = 1; i < line.length; i++) length += norm(sub(line[i], line[i - 1]));
    for (let i = 2; i < line.length; i++) {
      const c = cross(sub(line[i - 1], line[i - 2]), sub(line[i], line[i - 1]));
      const sign = Math.abs(c) < 1e-6 ? 0 : Math.sign(c);
      if (sign !== 0 && sign !== lastSign) {
        if (lastSign !== 0) bends++;
        lastSign = sign;
      }
    }
    expect(length).toBeGreaterThan(6500);
    expect(bends).toBeGreaterThanOrEqual(12);
  });

  it("winds the lake shore counter-clockwise in the local frame", () => {
    const lake = truth.features.find((f) => f.kind === "shore")!;
    const ring = densify(lake.segments_local_m as XY[][], 16);
    let area2 = 0;
    for (let i = 0; i + 1 < ring.length; i++) area2 += cross(ring[i], ring[i + 1]);
    // Shoelace formula: positive twice-area means counter-clockwise (common practice).
    expect(area2).toBeGreaterThan(0);
  });
});

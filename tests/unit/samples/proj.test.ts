// The local frame ↔ WGS84 mapping, checked with proj4 and the ellipsoid's radii of curvature.
import proj4 from "proj4";
import { describe, expect, it } from "vitest";
import { LOCAL_PROJECTION, ORIGIN, localToWgs84, wgs84ToLocal } from "../../../samples/generate";
import { type XY, readTruth } from "./helpers";

const truth = readTruth();
const converter = proj4(truth.projection, "WGS84");

// WGS84 ellipsoid: a = 6378137 m, 1/f = 298.257223563 (NIMA TR8350.2, from memory).
const A = 6378137;
const F = 1 / 298.257223563;
const E2 = F * (2 - F);
const RAD = Math.PI / 180;

describe("local frame and WGS84", () => {
  it("publishes the projection the generator uses", () => {
    expect(truth.projection).toBe(LOCAL_PROJECTION);
    expect(truth.origin).toEqual(ORIGIN);
  });

  it("round-trips local → WGS84 → local within 1 mm over 20 km around the town", () => {
    let worst = 0;
    for (let x = -10_000; x <= 10_000; x += 500) {
      for (let y = -10_000; y <= 10_000; y += 500) {
        const back = converter.inverse(converter.forward([x, y]));
        worst = Math.max(worst, Math.hypot(back[0] - x, back[1] - y));
        const back2 = wgs84ToLocal(localToWgs84([x, y]));
        worst = Math.max(worst, Math.hypot(back2[0] - x, back2[1] - y));
      }
    }
    expect(worst).toBeLessThan(1e-3);
  });

  it("round-trips every truth control point within 1 mm and matches the published WGS84 ones", () => {
    for (const f of truth.features) {
      f.segments_local_m.forEach((seg, s) =>
        seg.forEach((p, k) => {
          const ll = converter.forward([p[0], p[1]]);
          const back = converter.inverse(ll);
          expect(Math.hypot(back[0] - p[0], back[1] - p[1])).toBeLessThan(1e-3);
          const pub = f.segments_wgs84[s][k];
          expect(Math.abs(pub[0] - ll[0])).toBeLessThanOrEqual(5e-8 + 1e-12);
          expect(Math.abs(pub[1] - ll[1])).toBeLessThanOrEqual(5e-8 + 1e-12);
        }),
      );
    }
  });

  it("puts the origin at the invented anchor point", () => {
    const [lon, lat] = converter.forward([0, 0]);
    expect(lon).toBeCloseTo(ORIGIN.lon, 10);
    expect(lat).toBeCloseTo(ORIGIN.lat, 10);
  });

  it("scales north and east by the ellipsoid's radii of curvature (metres, not feet or degrees)", () => {
    // Meridian radius M = a(1 - e²) / (1 - e² sin²φ)^(3/2) and prime-vertical radius
    // N = a / (1 - e² sin²φ)^(1/2) (Snyder, Map Projections: A Working Manual, USGS PP 1395, 1987,
    // ch. 4; from memory). On the central meridian of a transverse Mercator with k0 = 1, 1000 m
    // north is a meridian arc of 1000 m; 1000 m east along y = 0 spans 1000 / (N cos φ) radians
    // of longitude, up to terms of order (x / N)² ≈ 2.5e-8.
    const phi = ORIGIN.lat * RAD;
    const w = 1 - E2 * Math.sin(phi) ** 2;
    const M = (A * (1 - E2)) / w ** 1.5;
    const N = A / Math.sqrt(w);
    const north = converter.forward([0, 1000]);
    // Meridian arc by the midpoint rule: M taken halfway between the two latitudes, since M itself
    // grows with latitude (about 0.8 mm per km here if evaluated at one end).
    const phiMid = ((ORIGIN.lat + north[1]) / 2) * RAD;
    const mMid = (A * (1 - E2)) / (1 - E2 * Math.sin(phiMid) ** 2) ** 1.5;
    expect(Math.abs((north[1] - ORIGIN.lat) * RAD * mMid - 1000)).toBeLessThan(1e-4);
    expect(Math.abs((north[1] - ORIGIN.lat) * RAD * M - 1000)).toBeLessThan(2e-3);
    expect(north[0]).toBeCloseTo(ORIGIN.lon, 12);
    const east = converter.forward([1000, 0]);
    const dLon = (east[0] - ORIGIN.lon) * RAD;
    expect(Math.abs(dLon * N * Math.cos(phi) - 1000)).toBeLessThan(1e-3);
    // North is up: positive y increases latitude, positive x increases longitude.
    expect(north[1]).toBeGreaterThan(ORIGIN.lat);
    expect(east[0]).toBeGreaterThan(ORIGIN.lon);
  });
});

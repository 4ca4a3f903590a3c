import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { generateTown } from "../../../samples/generate";

const run = (...args: string[]) => spawnSync(process.execPath, ["--import", "tsx", "jobs/cli.ts", ...args], { encoding: "utf8", cwd: process.cwd() });

describe("lissom command line", () => {
  const dir = mkdtempSync(join(tmpdir(), "lissom-cli-"));
  const town = generateTown();
  const input = join(dir, "in.geojson");
  writeFileSync(
    input,
    JSON.stringify({ type: "FeatureCollection", features: town.features.slice(0, 3).map((f) => ({ type: "Feature", properties: { name: f.name }, geometry: { type: "LineString", coordinates: f.wgs84 } })) }),
  );

  it("fit → elevate → discretise round trip with a report", () => {
    const out = join(dir, "fit.geojson");
    const rep = join(dir, "rep.json");
    const a = run("fit", "--input", input, "--output", out, "--tolerance", "5", "--report", rep);
    expect(a.status, a.stderr).toBe(0);
    const fc = JSON.parse(readFileSync(out, "utf8"));
    expect(fc.features).toHaveLength(3);
    expect(fc.features[0].properties.name).toBe(town.features[0].name);
    const report = JSON.parse(readFileSync(rep, "utf8"));
    expect(report.totals.features).toBe(3);
    expect(report.totals.maxDeviation).toBeLessThanOrEqual(5);
    const el = join(dir, "el.geojson");
    expect(run("elevate", "--input", out, "--output", el, "--degree", "4").status).toBe(0);
    expect(JSON.parse(readFileSync(el, "utf8")).features[0].curves[0][0]).toHaveLength(5);
    const di = join(dir, "di.geojson");
    expect(run("discretise", "--input", el, "--output", di, "--tolerance", "0.5").status).toBe(0);
  });

  it("bad input: exit 1, one line naming file, feature and reason; usage: exit 2", () => {
    const bad = join(dir, "bad.geojson");
    writeFileSync(bad, JSON.stringify({ type: "FeatureCollection", features: [{ type: "Feature", properties: {}, geometry: { type: "LineString", coordinates: [[500000, 5000000], [500100, 5000100]] } }] }));
    const r = run("fit", "--input", bad, "--output", join(dir, "o.geojson"), "--tolerance", "5");
    expect(r.status).toBe(1);
    expect(r.stderr.trim().split("\n")).toHaveLength(1);
    expect(r.stderr).toMatch(/bad\.geojson: feature 0\b.*--crs/);
    const ok = run("fit", "--input", bad, "--output", join(dir, "o.geojson"), "--tolerance", "5", "--crs", "EPSG:32633");
    expect(ok.status, ok.stderr).toBe(0);
    expect(run("fit", "--input", bad, "--output", join(dir, "o.geojson")).status).toBe(2);
    expect(run("bogus").status).toBe(2);
    expect(run("fit", "--input", bad, "--output", join(dir, "o.dwg"), "--tolerance", "5").status).toBe(2);
    const missing = run("fit", "--input", join(dir, "none.geojson"), "--output", join(dir, "o.geojson"), "--tolerance", "5");
    expect(missing.status).toBe(1);
    expect(missing.stderr).toMatch(/none\.geojson: file not found/);
  });

  it("reads every input format and writes the format named by the output's extension", () => {
    const ndjson = join(dir, "in.ndjson");
    // RFC 8142-style lines: one GeoJSON Feature per line (newline-delimited GeoJSON).
    writeFileSync(ndjson, JSON.parse(readFileSync(input, "utf8")).features.map((f: unknown) => JSON.stringify(f)).join("\n") + "\n");
    const zip = join(dir, "fit.zip");
    const a = run("fit", "--input", ndjson, "--output", zip, "--tolerance", "5");
    expect(a.status, a.stderr).toBe(0);
    // The zipped Shapefile goes back in as input (the `shapefile` package reads it inside formats).
    const back = join(dir, "back.gml");
    const b = run("discretise", "--input", zip, "--output", back, "--tolerance", "1");
    expect(b.status, b.stderr).toBe(0);
    // GML 3.2 namespace (OGC 07-036, from memory): http://www.opengis.net/gml/3.2
    expect(readFileSync(back, "utf8")).toContain("http://www.opengis.net/gml/3.2");
    for (const ext of [".svg", ".csv", ".ndjson"]) {
      const out = join(dir, `fit${ext}`);
      const r = run("fit", "--input", input, "--output", out, "--tolerance", "5");
      expect(r.status, `${ext}: ${r.stderr}`).toBe(0);
      expect(readFileSync(out, "utf8").length).toBeGreaterThan(100);
    }
    expect(readFileSync(join(dir, "fit.svg"), "utf8")).toMatch(/<path[^>]* d="M[^"]*C/);
  });
});

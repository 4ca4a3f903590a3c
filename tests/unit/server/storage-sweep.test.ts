import { existsSync, mkdirSync, mkdtempSync, rmSync, utimesSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { resetEnvForTests } from "../../../app/.server/env.server";
import { STAGING_MAX_AGE_MS, sweepStaleStaging } from "../../../app/.server/storage.server";

const saved = { ...process.env };
const dir = mkdtempSync(join(tmpdir(), "lissom-sweep-"));
const staging = join(dir, "storage", "staging");

beforeAll(() => {
  process.env.STORAGE_DIR = join(dir, "storage");
  resetEnvForTests();
});
afterAll(() => {
  process.env = { ...saved };
  resetEnvForTests();
  rmSync(dir, { recursive: true, force: true });
});

/** A staging folder holding one file; folder and file dated `ageMs` ago unless `fileAgeMs` differs. */
function folder(name: string, ageMs: number, fileAgeMs = ageMs): string {
  const now = Date.now();
  const path = join(staging, name);
  mkdirSync(path, { recursive: true });
  writeFileSync(join(path, "output.geojson"), "{}");
  utimesSync(join(path, "output.geojson"), (now - fileAgeMs) / 1000, (now - fileAgeMs) / 1000);
  utimesSync(path, (now - ageMs) / 1000, (now - ageMs) / 1000);
  return path;
}

describe("staging folders left by stopped processes", () => {
  it("are removed once nothing in them has been written for a day; folders in use stay", async () => {
    const day = STAGING_MAX_AGE_MS;
    const abandoned = folder("abandoned", 3 * day);
    const fresh = folder("fresh", 60_000);
    // A long job: its folder was made days ago, but its output was written a minute ago.
    const longJob = folder("long-job", 3 * day, 60_000);
    expect(await sweepStaleStaging()).toBe(1);
    expect(existsSync(abandoned)).toBe(false);
    expect(existsSync(fresh)).toBe(true);
    expect(existsSync(longJob)).toBe(true);
  });

  it("does nothing when there is no staging folder yet", async () => {
    rmSync(staging, { recursive: true, force: true });
    expect(await sweepStaleStaging()).toBe(0);
  });
});

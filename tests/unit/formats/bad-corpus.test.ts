import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { DatasetInputError, inspectDataset, readFeatures } from "../../../app/formats";
import { buildCases, type BadCase } from "../../fixtures/bad/generate";

const dir = join(import.meta.dirname, "../../fixtures/bad");
const cases = JSON.parse(readFileSync(join(dir, "cases.json"), "utf8")) as BadCase[];

async function refusal(run: () => Promise<unknown>): Promise<DatasetInputError> {
  try {
    await run();
  } catch (e) {
    if (e instanceof DatasetInputError) return e;
    throw new Error(`expected a DatasetInputError, got ${(e as Error)?.stack ?? e}`);
  }
  throw new Error("the input was accepted");
}

describe("the bad-input corpus", () => {
  it("has at least 30 cases, one per folder", () => {
    expect(cases.length).toBeGreaterThanOrEqual(30);
    expect(new Set(cases.map((c) => c.name)).size).toBe(cases.length);
  });

  it("is what the generator makes", async () => {
    const { cases: built, files } = await buildCases();
    expect(built).toEqual(cases);
    for (const [rel, content] of files) {
      expect(readFileSync(join(dir, rel)).equals(Buffer.isBuffer(content) ? content : Buffer.from(content)), rel).toBe(true);
    }
  });

  for (const c of cases) {
    it(`${c.name}: ${c.about}`, async () => {
      const files = c.files.map((name) => ({ name, path: join(dir, c.name, name) }));
      const error = await refusal(() => inspectDataset(files, c.options));
      if (c.expect.pattern) expect(error.message).toMatch(new RegExp(c.expect.pattern));
      else expect(error.message).toBe(c.expect.message);
      // The message names the file (one of the upload's, or an entry inside its archive)...
      expect(c.files.some((name) => error.file === name || error.file.startsWith(`${name}/`)), error.file).toBe(true);
      expect(error.message.startsWith(`${error.file}: `)).toBe(true);
      // ...the feature or byte offset, unless the problem is the file as a whole...
      expect(error.feature).toBe(c.expect.feature);
      expect(error.offset).toBe(c.expect.offset);
      if (!c.expect.wholeFile) {
        expect(error.feature !== undefined || error.offset !== undefined).toBe(true);
        if (error.feature !== undefined) expect(error.message).toContain(`feature ${error.feature}`);
        if (error.offset !== undefined) expect(error.message).toContain(`byte ${error.offset}`);
      }
      // ...and what to do: a hint sentence after the reason.
      expect(error.hint.length).toBeGreaterThan(20);
      expect(error.message.endsWith(error.hint.endsWith(".") ? error.hint : `${error.hint}.`)).toBe(true);
      // Streaming the features (the worker's and the CLI's path) refuses the same way.
      const streamed = await refusal(async () => {
        for await (const _ of readFeatures(files, c.options)) void _;
      });
      expect(streamed.message).toBe(error.message);
    });
  }
});

import { readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { chromium, type Browser, type Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { startServer, type RunningServer } from "./server";

const CHROMIUM = process.env.CHROMIUM_PATH ?? "/usr/bin/chromium";
let server: RunningServer;
let browser: Browser;

beforeAll(async () => {
  server = await startServer();
  browser = await chromium.launch({
    executablePath: CHROMIUM,
    args: ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update", "--no-first-run"],
  });
});

afterAll(async () => {
  await browser?.close();
  await server?.stop();
});

async function signIn(page: Page, email: string) {
  await page.goto(`${server.url}/sign-in`);
  await page.getByLabel("E-mail").fill(email);
  await page.getByLabel("Password").fill("lissom-demo");
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.waitForURL((url) => !url.pathname.startsWith("/sign-in"));
}

function sampleFile(): string {
  const dir = join(process.cwd(), "samples");
  const name = readdirSync(dir).find((f) => f.endsWith("-river.geojson"));
  if (!name) throw new Error("No *-river.geojson in samples/; run `npm run samples`.");
  return join(dir, name);
}

describe("the first slice, in a browser", () => {
  it("an engineer uploads a sample, runs a fit job, sees it succeed, downloads and publishes the output; a consumer finds it", async () => {
    const context = await browser.newContext({ acceptDownloads: true });
    const page = await context.newPage();
    const consoleErrors: string[] = [];
    page.on("console", (m) => m.type() === "error" && consoleErrors.push(`${m.text()} at ${m.location().url}`));
    page.on("response", (r) => r.status() >= 400 && consoleErrors.push(`HTTP ${r.status()} ${r.url()}`));

    await signIn(page, "engineer@example.com");
    await expect(page.getByTestId("role").textContent()).resolves.toBe("engineer");
    await page.screenshot({ path: "tests/e2e/.artifacts/jobs.png", fullPage: true });

    await page.goto(`${server.url}/datasets`);
    await page.locator('input[name="file"]').setInputFiles(sampleFile());
    await page.locator('input[name="name"]').fill("e2e river");
    await page.getByRole("button", { name: "Upload" }).click();
    await page.waitForURL(/\/datasets\/[\w-]+$/);
    await page.screenshot({ path: "tests/e2e/.artifacts/dataset.png", fullPage: true });
    await page.getByRole("heading", { name: "e2e river" }).waitFor();

    await page.locator('input[name="tolerance"]').fill("5");
    await page.getByRole("button", { name: "Run fit" }).click();
    await page.waitForURL(/\/jobs\/[\w-]+$/);
    // The status badge is polled by a fetcher; it reaches "successful" without a reload.
    await page.locator('[data-testid="job-status"] [data-status="successful"]').waitFor({ timeout: 60_000 });
    await page.getByRole("link", { name: "Download" }).first().waitFor();

    const [download] = await Promise.all([page.waitForEvent("download"), page.getByRole("link", { name: "Download" }).first().click()]);
    const path = await download.path();
    const geojson = JSON.parse(readFileSync(path!, "utf8"));
    // DESIGN.md output contract: a FeatureCollection (RFC 7946 §3.3) whose features carry `curves`.
    expect(geojson.type).toBe("FeatureCollection");
    expect(geojson.features.length).toBeGreaterThan(0);
    for (const f of geojson.features) {
      expect(Array.isArray(f.curves)).toBe(true);
      expect(f.curves[0].length).toBeGreaterThan(0);
      expect(f.curves[0][0]).toHaveLength(4); // cubic: four control points
    }

    await page.getByRole("button", { name: "Publish" }).click();
    await page.getByText("Output published").waitFor();
    await page.screenshot({ path: "tests/e2e/.artifacts/job.png", fullPage: true });
    expect(consoleErrors.join("\n")).toBe("");
    await context.close();

    const consumer = await browser.newContext({ acceptDownloads: true });
    const cpage = await consumer.newPage();
    await signIn(cpage, "consumer@example.com");
    expect(new URL(cpage.url()).pathname).toBe("/library");
    await cpage.getByText("e2e river").waitFor();
    await cpage.screenshot({ path: "tests/e2e/.artifacts/library.png", fullPage: true });
    const [cdownload] = await Promise.all([cpage.waitForEvent("download"), cpage.getByRole("link", { name: "Download" }).first().click()]);
    expect(JSON.parse(readFileSync((await cdownload.path())!, "utf8")).features.length).toBe(geojson.features.length);

    // A consumer who types an engineer's address gets 403, not the page.
    for (const path of ["/datasets", "/jobs"]) {
      const response = await cpage.goto(`${server.url}${path}`);
      expect(response?.status(), path).toBe(403);
      await cpage.getByRole("heading", { name: "Not allowed" }).waitFor();
    }
    await consumer.close();
  });
});

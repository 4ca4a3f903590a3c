import { afterEach, describe, expect, it } from "vitest";
import { env, resetEnvForTests } from "../../../app/.server/env.server";

const saved = { ...process.env };
afterEach(() => {
  process.env = { ...saved };
  resetEnvForTests();
});

function withEnv(vars: Record<string, string | undefined>) {
  process.env = { ...saved };
  for (const [k, v] of Object.entries(vars)) {
    if (v === undefined) delete process.env[k];
    else process.env[k] = v;
  }
  resetEnvForTests();
}

describe("settings from the environment", () => {
  it("stops a production start without AUTH_SECRET, saying what to set", () => {
    withEnv({ NODE_ENV: "production", AUTH_SECRET: undefined, LISSOM_DEMO: undefined });
    expect(() => env()).toThrow(/AUTH_SECRET is not set/);
  });

  it("seeds nothing in production unless the demo flag is given", () => {
    withEnv({ NODE_ENV: "production", AUTH_SECRET: "x".repeat(40), LISSOM_DEMO: undefined });
    expect(env().demo).toBe(false);
    withEnv({ NODE_ENV: "production", AUTH_SECRET: "x".repeat(40), LISSOM_DEMO: "1" });
    expect(env().demo).toBe(true);
  });

  it("is in demo mode by default outside production", () => {
    withEnv({ NODE_ENV: "development", AUTH_SECRET: "y".repeat(40), LISSOM_DEMO: undefined });
    expect(env().demo).toBe(true);
    withEnv({ NODE_ENV: "development", AUTH_SECRET: "y".repeat(40), LISSOM_DEMO: "0" });
    expect(env().demo).toBe(false);
  });

  it("lists every bad field at once", () => {
    withEnv({ PORT: "not-a-port", WORKER_CONCURRENCY: "0", AUTH_SECRET: "short" });
    expect(() => env()).toThrow(/PORT[\s\S]*AUTH_SECRET[\s\S]*WORKER_CONCURRENCY|PORT[\s\S]*WORKER_CONCURRENCY/);
  });
});

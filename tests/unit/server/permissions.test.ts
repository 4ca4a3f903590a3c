import { describe, expect, it } from "vitest";
import { can } from "../../../app/.server/permissions.server";

// The role table of DESIGN.md ("People and roles"), checked action by action.
describe("who may do what", () => {
  it("lets engineers upload, submit, cancel and publish, but not retry", () => {
    expect(can("engineer", { dataset: ["upload"] })).toBe(true);
    expect(can("engineer", { job: ["submit", "cancel"] })).toBe(true);
    expect(can("engineer", { output: ["publish"] })).toBe(true);
    expect(can("engineer", { job: ["retry"] })).toBe(false);
  });

  it("lets operators watch, retry, cancel and pause, but not upload, submit or publish", () => {
    expect(can("operator", { job: ["read", "retry", "cancel"], log: ["read"], schedule: ["pause"] })).toBe(true);
    expect(can("operator", { dataset: ["upload"] })).toBe(false);
    expect(can("operator", { job: ["submit"] })).toBe(false);
    expect(can("operator", { output: ["publish"] })).toBe(false);
  });

  it("lets consumers browse and download outputs and nothing else", () => {
    expect(can("consumer", { output: ["read", "download"] })).toBe(true);
    for (const p of [{ dataset: ["read"] }, { job: ["read"] }, { log: ["read"] }, { output: ["publish"] }] as const) {
      expect(can("consumer", p as never)).toBe(false);
    }
  });

  it("lets admins do everything", () => {
    expect(can("admin", { dataset: ["read", "upload"], job: ["read", "submit", "cancel", "retry"], output: ["publish", "download"], schedule: ["write", "pause"] })).toBe(true);
  });

  it("gives unknown or missing roles nothing", () => {
    expect(can("superuser", { output: ["read"] })).toBe(false);
    expect(can(null, { output: ["read"] })).toBe(false);
  });
});

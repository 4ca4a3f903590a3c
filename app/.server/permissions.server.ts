import { createAccessControl } from "better-auth/plugins/access";
import { adminAc, defaultStatements } from "better-auth/plugins/admin/access";

/**
 * Who may do what (DESIGN.md, "People and roles"). One table serves both better-auth's admin
 * plugin (so roles can be set on people) and our own server-side checks.
 */
export const statements = {
  ...defaultStatements,
  dataset: ["read", "upload"],
  definition: ["read", "write"],
  job: ["read", "submit", "cancel", "retry"],
  schedule: ["read", "write", "pause"],
  output: ["read", "download", "publish"],
  log: ["read"],
} as const;

export const ac = createAccessControl(statements);

export const roles = {
  admin: ac.newRole({
    ...adminAc.statements,
    dataset: ["read", "upload"],
    definition: ["read", "write"],
    job: ["read", "submit", "cancel", "retry"],
    schedule: ["read", "write", "pause"],
    output: ["read", "download", "publish"],
    log: ["read"],
  }),
  engineer: ac.newRole({
    dataset: ["read", "upload"],
    definition: ["read", "write"],
    job: ["read", "submit", "cancel"],
    schedule: ["read", "write"],
    output: ["read", "download", "publish"],
    log: ["read"],
  }),
  operator: ac.newRole({
    dataset: ["read"],
    definition: ["read"],
    job: ["read", "cancel", "retry"],
    schedule: ["read", "pause"],
    output: ["read", "download"],
    log: ["read"],
  }),
  consumer: ac.newRole({
    output: ["read", "download"],
  }),
};

export type RoleName = keyof typeof roles;
export const roleNames = Object.keys(roles) as RoleName[];
export type Resource = Exclude<keyof typeof statements, "user" | "session">;
export type Permission = { [R in Resource]?: (typeof statements)[R][number][] };

export function isRoleName(value: unknown): value is RoleName {
  return typeof value === "string" && (roleNames as string[]).includes(value);
}

/** True when `role` holds every action asked for. Unknown roles hold nothing. */
export function can(role: string | null | undefined, permission: Permission): boolean {
  if (!isRoleName(role)) return false;
  return roles[role].authorize(permission as never).success;
}

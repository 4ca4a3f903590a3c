import { Form, NavLink, Outlet, data } from "react-router";
import { takeNotice } from "../.server/flash.server";
import { requireUser } from "../.server/guards.server";
import { can } from "../.server/permissions.server";
import { Notice } from "../components/page";
import type { Route } from "./+types/console";

/** The signed-in console: every page under it is checked for a session here, and again by its own loader for its role. */
export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireUser(request);
  const nav = [
    can(user.role, { job: ["read"] }) && { to: "/overview", label: "Overview" },
    can(user.role, { job: ["read"] }) && { to: "/jobs", label: "Jobs" },
    can(user.role, { dataset: ["read"] }) && { to: "/datasets", label: "Datasets" },
    can(user.role, { definition: ["read"] }) && { to: "/definitions", label: "Definitions" },
    can(user.role, { schedule: ["read"] }) && { to: "/schedules", label: "Schedules" },
    { to: "/library", label: "Library" },
  ].filter(Boolean) as { to: string; label: string }[];
  const { notice, headers } = await takeNotice(request);
  return data({ user, nav, notice }, { headers });
}

export default function Console({ loaderData }: Route.ComponentProps) {
  const { user, nav, notice } = loaderData;
  return (
    <div className="min-h-screen">
      <header className="border-b border-rule bg-card">
        <div className="mx-auto flex max-w-6xl items-center gap-6 px-6 py-3">
          <a href="/" className="text-lg font-semibold tracking-tight text-tide-700">
            Lissom
          </a>
          <nav className="flex gap-1" aria-label="Console">
            {nav.map((item) => (
              <NavLink
                key={item.to}
                to={item.to}
                className={({ isActive }) =>
                  `rounded-md px-3 py-1.5 text-sm font-medium ${isActive ? "bg-tide-50 text-tide-700" : "text-ink-soft hover:text-ink"}`
                }
              >
                {item.label}
              </NavLink>
            ))}
          </nav>
          <div className="ml-auto flex items-center gap-3 text-sm">
            <span className="text-ink-soft">
              {user.email} · <span data-testid="role">{user.role}</span>
            </span>
            <Form method="post" action="/sign-out">
              <button className="text-tide-600 hover:underline">Sign out</button>
            </Form>
          </div>
        </div>
      </header>
      <main className="mx-auto max-w-6xl px-6 py-8">
        {notice && <Notice>{notice}</Notice>}
        <Outlet />
      </main>
    </div>
  );
}

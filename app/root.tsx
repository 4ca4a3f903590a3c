import { isRouteErrorResponse, Links, Meta, Outlet, Scripts, ScrollRestoration } from "react-router";
import type { Route } from "./+types/root";
import "./app.css";

// Lissom's mark, inline so no extra request: one smooth stroke on a teal tile.
const FAVICON =
  "data:image/svg+xml," +
  encodeURIComponent(
    '<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 32 32"><rect width="32" height="32" rx="7" fill="#17676a"/><path d="M6 22C11 6 19 26 26 10" fill="none" stroke="#f7f5f0" stroke-width="3.2" stroke-linecap="round"/></svg>',
  );

export function Layout({ children }: { children: React.ReactNode }) {
  return (
    <html lang="en">
      <head>
        <meta charSet="utf-8" />
        <meta name="viewport" content="width=device-width, initial-scale=1" />
        <link rel="icon" href={FAVICON} />
        <Meta />
        <Links />
      </head>
      <body className="min-h-screen antialiased">
        {children}
        <ScrollRestoration />
        <Scripts />
      </body>
    </html>
  );
}

export default function App() {
  return <Outlet />;
}

export function meta() {
  return [{ title: "Lissom" }];
}

/** One error boundary for the console, with a message per status; stacks only in development. */
export function ErrorBoundary({ error }: Route.ErrorBoundaryProps) {
  let title = "Something went wrong";
  let detail = "The page could not be shown. Try again; if it keeps happening, tell an admin.";
  let stack: string | undefined;
  if (isRouteErrorResponse(error)) {
    const body = error.data as { detail?: string } | string | undefined;
    const given = typeof body === "string" ? body : body?.detail;
    if (error.status === 403) {
      title = "Not allowed";
      detail = given ?? "Your role does not give access to this page.";
    } else if (error.status === 404) {
      title = "Not found";
      detail = given ?? "There is nothing at this address.";
    } else {
      title = `${error.status} ${error.statusText}`;
      detail = given ?? detail;
    }
  } else if (import.meta.env.DEV && error instanceof Error) {
    detail = error.message;
    stack = error.stack;
  }
  return (
    <main className="mx-auto max-w-2xl p-10">
      <p className="text-sm font-medium uppercase tracking-wide text-tide-600">Lissom</p>
      <h1 className="mt-2 text-2xl font-semibold">{title}</h1>
      <p className="mt-3 text-ink-soft">{detail}</p>
      <a href="/" className="mt-6 inline-block text-tide-600 underline">Back to the start</a>
      {stack && <pre className="mt-6 overflow-x-auto rounded bg-card p-4 text-xs">{stack}</pre>}
    </main>
  );
}

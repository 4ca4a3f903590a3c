import type { ReactNode } from "react";

export function PageHeader({ title, subtitle, actions }: { title: string; subtitle?: ReactNode; actions?: ReactNode }) {
  return (
    <header className="mb-6 flex flex-wrap items-end justify-between gap-4">
      <div>
        <h1 className="text-2xl font-semibold tracking-tight">{title}</h1>
        {subtitle && <p className="mt-1 text-ink-soft">{subtitle}</p>}
      </div>
      {actions && <div className="flex gap-2">{actions}</div>}
    </header>
  );
}

export function Card({ title, children, className = "" }: { title?: ReactNode; children: ReactNode; className?: string }) {
  return (
    <section className={`rounded-card border border-rule bg-card p-5 ${className}`}>
      {title && <h2 className="mb-3 text-lg font-semibold">{title}</h2>}
      {children}
    </section>
  );
}

export function EmptyState({ title, children }: { title: string; children?: ReactNode }) {
  return (
    <div className="rounded-card border border-dashed border-rule bg-card/60 p-8 text-center">
      <p className="font-medium">{title}</p>
      {children && <div className="mt-2 text-sm text-ink-soft">{children}</div>}
    </div>
  );
}

export function Notice({ tone = "info", children }: { tone?: "info" | "error"; children: ReactNode }) {
  const cls = tone === "error" ? "border-clay-600/30 bg-clay-50 text-clay-600" : "border-tide-500/30 bg-tide-50 text-tide-700";
  return (
    <div role={tone === "error" ? "alert" : "status"} className={`mb-4 rounded-card border p-3 text-sm ${cls}`}>
      {children}
    </div>
  );
}

export const buttonClass =
  "inline-flex items-center justify-center rounded-md bg-tide-600 px-3.5 py-2 text-sm font-medium text-white shadow-sm hover:bg-tide-700 focus:outline-none focus-visible:ring-2 focus-visible:ring-tide-500 focus-visible:ring-offset-2 disabled:opacity-50";
export const quietButtonClass =
  "inline-flex items-center justify-center rounded-md border border-rule bg-card px-3.5 py-2 text-sm font-medium text-ink hover:bg-paper focus:outline-none focus-visible:ring-2 focus-visible:ring-tide-500 disabled:opacity-50";
export const inputClass =
  "block w-full rounded-md border border-rule bg-card px-3 py-2 text-sm shadow-inner focus:border-tide-500 focus:outline-none focus:ring-1 focus:ring-tide-500";

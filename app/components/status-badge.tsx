const styles: Record<string, string> = {
  accepted: "bg-ochre-50 text-ochre-600 ring-ochre-600/30",
  running: "bg-tide-50 text-tide-700 ring-tide-500/30",
  successful: "bg-fern-50 text-fern-600 ring-fern-600/30",
  failed: "bg-clay-50 text-clay-600 ring-clay-600/30",
  dismissed: "bg-paper text-ink-soft ring-rule",
  ok: "bg-fern-50 text-fern-600 ring-fern-600/30",
  repaired: "bg-ochre-50 text-ochre-600 ring-ochre-600/30",
  skipped: "bg-paper text-ink-soft ring-rule",
  error: "bg-clay-50 text-clay-600 ring-clay-600/30",
};

/** A job or feature status word, as the API spells it (OGC API - Processes for jobs). */
export function StatusBadge({ status }: { status: string }) {
  return (
    <span data-status={status} className={`inline-flex items-center rounded-full px-2 py-0.5 text-xs font-medium ring-1 ring-inset ${styles[status] ?? styles.dismissed}`}>
      {status}
    </span>
  );
}

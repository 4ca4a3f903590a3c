/** A horizontal bar for 0–100 %, with the figure spoken to assistive technology. */
export function ProgressBar({ value, label }: { value: number; label?: string }) {
  const clamped = Math.max(0, Math.min(100, Math.round(value)));
  return (
    <div className="flex items-center gap-3">
      <div
        role="progressbar"
        aria-valuemin={0}
        aria-valuemax={100}
        aria-valuenow={clamped}
        aria-label={label ?? "Progress"}
        className="h-2.5 w-full overflow-hidden rounded-full bg-rule"
      >
        <div className="h-full rounded-full bg-tide-500 transition-[width] duration-500" style={{ width: `${clamped}%` }} />
      </div>
      <span className="w-11 text-right text-sm tabular-nums text-ink-soft">{clamped}%</span>
    </div>
  );
}

/** The safety note of DESIGN.md, shown wherever outputs are used or downloaded. */
export function Caution({ compact = false }: { compact?: boolean }) {
  return (
    <aside role="note" className={`rounded-card border border-ochre-600/30 bg-ochre-50 text-ochre-600 ${compact ? "p-3 text-xs" : "p-4 text-sm"}`}>
      <strong className="font-semibold">Approximation within the stated tolerance.</strong> Fitted and discretised geometry is not for legal
      boundary definition or for locating buried utilities. Defer to local survey codes and licensed surveyors.
    </aside>
  );
}

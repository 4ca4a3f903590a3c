export interface ThroughputHour {
  /** ISO time of the start of the hour. */
  start: string;
  successful: number;
  failed: number;
  features: number;
}

/**
 * Jobs finished per hour as stacked bars (succeeded below, failed above) with the features
 * processed per hour as a line on its own scale. Plain SVG; the table beside it carries the
 * same numbers for screen readers.
 */
export function ThroughputChart({ hours, height = 160 }: { hours: ThroughputHour[]; height?: number }) {
  const width = 600;
  const left = 28;
  const right = 40;
  const top = 10;
  const bottom = 22;
  const plotW = width - left - right;
  const plotH = height - top - bottom;
  const maxJobs = Math.max(1, ...hours.map((h) => h.successful + h.failed));
  const maxFeatures = Math.max(1, ...hours.map((h) => h.features));
  const step = plotW / Math.max(1, hours.length);
  const barW = Math.max(2, step * 0.6);
  const y = (jobs: number) => top + plotH - (jobs / maxJobs) * plotH;
  const yf = (features: number) => top + plotH - (features / maxFeatures) * plotH;
  const cx = (i: number) => left + step * i + step / 2;
  const hourLabel = (iso: string) => new Date(iso).toISOString().slice(11, 13);
  const line = hours.map((h, i) => `${i === 0 ? "M" : "L"}${cx(i).toFixed(1)} ${yf(h.features).toFixed(1)}`).join("");
  return (
    <figure>
      <svg viewBox={`0 0 ${width} ${height}`} className="w-full" role="img" aria-label="Jobs finished and features processed per hour">
        <line x1={left} x2={width - right} y1={top + plotH} y2={top + plotH} stroke="var(--color-rule)" />
        <text x={left - 4} y={top + 4} textAnchor="end" fontSize="10" fill="var(--color-ink-faint)">{maxJobs}</text>
        <text x={left - 4} y={top + plotH} textAnchor="end" fontSize="10" fill="var(--color-ink-faint)">0</text>
        <text x={width - right + 4} y={top + 4} fontSize="10" fill="var(--color-ochre-600)">{compact(maxFeatures)}</text>
        {hours.map((h, i) => (
          <g key={h.start}>
            <title>{`${hourLabel(h.start)}:00 UTC: ${h.successful} succeeded, ${h.failed} failed, ${h.features} features`}</title>
            <rect x={cx(i) - barW / 2} y={y(h.successful)} width={barW} height={top + plotH - y(h.successful)} fill="var(--color-fern-600)" opacity={0.75} />
            <rect x={cx(i) - barW / 2} y={y(h.successful + h.failed)} width={barW} height={y(h.successful) - y(h.successful + h.failed)} fill="var(--color-clay-600)" opacity={0.8} />
            {(i % Math.ceil(hours.length / 12) === 0 || i === hours.length - 1) && (
              <text x={cx(i)} y={height - 6} textAnchor="middle" fontSize="10" fill="var(--color-ink-faint)">{hourLabel(h.start)}</text>
            )}
          </g>
        ))}
        <path d={line} fill="none" stroke="var(--color-ochre-600)" strokeWidth="1.5" />
      </svg>
      <figcaption className="mt-1 flex flex-wrap gap-4 text-xs text-ink-soft">
        <span><span className="mr-1 inline-block size-2.5 rounded-sm bg-fern-600/75 align-middle" />succeeded</span>
        <span><span className="mr-1 inline-block size-2.5 rounded-sm bg-clay-600/80 align-middle" />failed</span>
        <span><span className="mr-1 inline-block h-0.5 w-3 bg-ochre-600 align-middle" />features (right scale)</span>
        <span>hours in UTC</span>
      </figcaption>
    </figure>
  );
}

function compact(n: number): string {
  return n >= 1e6 ? `${(n / 1e6).toPrecision(2)}M` : n >= 1e3 ? `${(n / 1e3).toPrecision(2)}k` : String(n);
}

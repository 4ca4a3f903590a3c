import { useMemo } from "react";

interface Props {
  /** The feature's lines before the steps, per part, [x, y] in the dataset's coordinates. */
  input: number[][][];
  /** The lines after the steps. */
  result: number[][][];
  /** Control points of the result's Bézier segments, per segment (drawn with their handles). */
  controlPoints?: number[][][];
  bbox: [number, number, number, number] | null;
  /** Geographic coordinates are drawn with x shrunk by cos(latitude) so shapes keep their proportions. */
  geographic: boolean;
  height?: number;
}

/**
 * Input against result for one feature: the input in a light dashed line, the result on top
 * in the action colour, and the control polygon of each curve segment as faint handles.
 */
export function PreviewPlot({ input, result, controlPoints = [], bbox, geographic, height = 320 }: Props) {
  const frame = useMemo(() => {
    if (!bbox) return null;
    const [minX, minY, maxX, maxY] = bbox;
    const kx = geographic ? Math.cos((((minY + maxY) / 2) * Math.PI) / 180) : 1;
    const w = Math.max((maxX - minX) * kx, 1e-9);
    const h = Math.max(maxY - minY, 1e-9);
    const pad = Math.max(w, h) * 0.05;
    const xy = ([x, y]: number[]): [number, number] => [(x! - minX) * kx, maxY - y!];
    const at = (p: number[]) => xy(p).map((v) => v.toPrecision(8)).join(" ");
    return { view: `${-pad} ${-pad} ${w + 2 * pad} ${h + 2 * pad}`, unit: Math.max(w, h) / 400, at, xy };
  }, [bbox, geographic]);
  if (!frame) return <p className="text-sm text-ink-soft">Nothing to draw: the feature has no lines.</p>;
  const path = (parts: number[][][]) => parts.map((part) => part.map((p, i) => `${i === 0 ? "M" : "L"}${frame.at(p)}`).join("")).join("");
  const u = frame.unit;
  return (
    <figure>
      <svg
        role="img"
        aria-label="The feature before and after the steps"
        viewBox={frame.view}
        preserveAspectRatio="xMidYMid meet"
        className="w-full rounded-md border border-rule bg-paper"
        style={{ height }}
      >
        {controlPoints.map((seg, i) => (
          <g key={i} stroke="var(--color-ochre-600)" strokeOpacity={0.45} fill="var(--color-ochre-600)" fillOpacity={0.6}>
            <path d={seg.map((p, j) => `${j === 0 ? "M" : "L"}${frame.at(p)}`).join("")} fill="none" strokeWidth={u * 0.6} />
            {seg.slice(1, -1).map((p, j) => {
              const [x, y] = frame.xy(p);
              return <circle key={j} cx={x} cy={y} r={u * 1.4} stroke="none" />;
            })}
          </g>
        ))}
        <path d={path(input)} fill="none" stroke="var(--color-ink-faint)" strokeWidth={u * 1.2} strokeDasharray={`${u * 3} ${u * 2}`} strokeLinejoin="round" />
        <path d={path(result)} fill="none" stroke="var(--color-tide-600)" strokeWidth={u * 1.6} strokeLinejoin="round" />
      </svg>
      <figcaption className="mt-2 flex flex-wrap gap-4 text-xs text-ink-soft">
        <span className="flex items-center gap-1.5">
          <svg width="22" height="6" aria-hidden="true"><line x1="0" y1="3" x2="22" y2="3" stroke="var(--color-ink-faint)" strokeWidth="2" strokeDasharray="4 3" /></svg>
          input
        </span>
        <span className="flex items-center gap-1.5">
          <svg width="22" height="6" aria-hidden="true"><line x1="0" y1="3" x2="22" y2="3" stroke="var(--color-tide-600)" strokeWidth="2.5" /></svg>
          result
        </span>
        {controlPoints.length > 0 && (
          <span className="flex items-center gap-1.5">
            <svg width="22" height="8" aria-hidden="true"><line x1="2" y1="4" x2="20" y2="4" stroke="var(--color-ochre-600)" strokeOpacity="0.5" /><circle cx="11" cy="4" r="2.5" fill="var(--color-ochre-600)" fillOpacity="0.6" /></svg>
            control points
          </span>
        )}
      </figcaption>
    </figure>
  );
}

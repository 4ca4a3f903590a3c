import { useMemo } from "react";
import { usePanZoom } from "./use-pan-zoom";

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
 * Input against result for one feature: the input as a light wide band, the result on top
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
    return { view: { x: -pad, y: -pad, w: w + 2 * pad, h: h + 2 * pad }, at, xy };
  }, [bbox, geographic]);
  const { view, handlers, reset } = usePanZoom(frame?.view, 1.25);
  const paths = useMemo(() => {
    if (!frame) return null;
    const path = (parts: number[][][]) => parts.map((part) => part.map((p, i) => `${i === 0 ? "M" : "L"}${frame.at(p)}`).join("")).join("");
    return { input: path(input), result: path(result), handles: controlPoints.map((seg) => path([seg])) };
  }, [frame, input, result, controlPoints]);
  if (!frame || !view || !paths) return <p className="text-sm text-ink-soft">Nothing to draw: the feature has no lines.</p>;
  const u = Math.max(view.w, view.h) / 400;

  return (
    <figure className="relative">
      <svg
        {...handlers}
        role="img"
        aria-label="The feature before and after the steps"
        viewBox={`${view.x} ${view.y} ${view.w} ${view.h}`}
        preserveAspectRatio="xMidYMid meet"
        className="w-full cursor-grab touch-none rounded-md border border-rule bg-paper active:cursor-grabbing"
        style={{ height }}
      >
        {controlPoints.map((seg, i) => (
          <g key={i} stroke="var(--color-ochre-600)" strokeOpacity={0.45} fill="var(--color-ochre-600)" fillOpacity={0.6}>
            <path d={paths.handles[i]} fill="none" strokeWidth={u * 0.6} />
            {seg.slice(1, -1).map((p, j) => {
              const [x, y] = frame.xy(p);
              return <circle key={j} cx={x} cy={y} r={u * 1.4} stroke="none" />;
            })}
          </g>
        ))}
        <path d={paths.input} fill="none" stroke="var(--color-clay-600)" strokeOpacity={0.35} strokeWidth={u * 4} strokeLinejoin="round" strokeLinecap="round" />
        <path d={paths.result} fill="none" stroke="var(--color-tide-600)" strokeWidth={u * 1.6} strokeLinejoin="round" />
      </svg>
      <button type="button" onClick={reset} className="absolute right-2 top-2 rounded bg-card/90 px-2 py-1 text-xs text-ink-soft shadow">
        Reset view
      </button>
      <figcaption className="mt-2 flex flex-wrap gap-4 text-xs text-ink-soft">
        <span className="flex items-center gap-1.5">
          <svg width="22" height="8" aria-hidden="true"><line x1="2" y1="4" x2="20" y2="4" stroke="var(--color-clay-600)" strokeOpacity="0.35" strokeWidth="5" strokeLinecap="round" /></svg>
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
        <span>wheel to zoom, drag to move</span>
      </figcaption>
    </figure>
  );
}

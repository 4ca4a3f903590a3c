import { useMemo } from "react";
import { usePanZoom } from "./use-pan-zoom";

interface Props {
  parts: number[][][];
  bbox: [number, number, number, number] | null;
  /** Geographic coordinates are drawn with x shrunk by cos(latitude) so shapes keep their proportions. */
  geographic: boolean;
  height?: number;
}

/** A picture of linework with drag to pan and wheel to zoom; y grows north. */
export function LineworkPlot({ parts, bbox, geographic, height = 360 }: Props) {
  const base = useMemo(() => {
    if (!bbox) return null;
    const [minX, minY, maxX, maxY] = bbox;
    const kx = geographic ? Math.cos((((minY + maxY) / 2) * Math.PI) / 180) : 1;
    const w = Math.max((maxX - minX) * kx, 1e-9);
    const h = Math.max(maxY - minY, 1e-9);
    const pad = Math.max(w, h) * 0.04;
    return { minX, maxY, kx, view: { x: -pad, y: -pad, w: w + 2 * pad, h: h + 2 * pad } };
  }, [bbox, geographic]);
  const { view, handlers, reset } = usePanZoom(base?.view);

  const paths = useMemo(() => {
    if (!base) return [];
    return parts.map((part) =>
      part.map(([x, y], i) => `${i === 0 ? "M" : "L"}${((x! - base.minX) * base.kx).toPrecision(7)} ${(base.maxY - y!).toPrecision(7)}`).join(""),
    );
  }, [parts, base]);

  if (!base || !view) return <p className="text-sm text-ink-soft">Nothing to draw: the dataset has no lines.</p>;
  const stroke = Math.max(view.w, view.h) / 500;

  return (
    <div className="relative">
      <svg
        {...handlers}
        role="img"
        aria-label="Preview of the dataset's linework"
        viewBox={`${view.x} ${view.y} ${view.w} ${view.h}`}
        preserveAspectRatio="xMidYMid meet"
        className="w-full cursor-grab touch-none rounded-md border border-rule bg-paper active:cursor-grabbing"
        style={{ height }}
      >
        {paths.map((d, i) => (
          <path key={i} d={d} fill="none" stroke="var(--color-tide-600)" strokeWidth={stroke} strokeLinejoin="round" />
        ))}
      </svg>
      <button type="button" onClick={reset} className="absolute right-2 top-2 rounded bg-card/90 px-2 py-1 text-xs text-ink-soft shadow">
        Reset view
      </button>
    </div>
  );
}

import { useMemo, useRef, useState } from "react";

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
  const [view, setView] = useState(base?.view);
  const drag = useRef<{ x: number; y: number } | null>(null);
  const svgRef = useRef<SVGSVGElement>(null);

  const paths = useMemo(() => {
    if (!base) return [];
    return parts.map((part) =>
      part.map(([x, y], i) => `${i === 0 ? "M" : "L"}${((x! - base.minX) * base.kx).toPrecision(7)} ${(base.maxY - y!).toPrecision(7)}`).join(""),
    );
  }, [parts, base]);

  if (!base || !view) return <p className="text-sm text-ink-soft">Nothing to draw: the dataset has no lines.</p>;
  const stroke = Math.max(view.w, view.h) / 500;

  function onWheel(e: React.WheelEvent<SVGSVGElement>) {
    const rect = svgRef.current!.getBoundingClientRect();
    const fx = (e.clientX - rect.left) / rect.width;
    const fy = (e.clientY - rect.top) / rect.height;
    const k = e.deltaY > 0 ? 1.2 : 1 / 1.2;
    setView((v) => v && { x: v.x + v.w * fx * (1 - k), y: v.y + v.h * fy * (1 - k), w: v.w * k, h: v.h * k });
  }
  function onPointerMove(e: React.PointerEvent<SVGSVGElement>) {
    if (!drag.current) return;
    const rect = svgRef.current!.getBoundingClientRect();
    const dx = ((e.clientX - drag.current.x) / rect.width) * view!.w;
    const dy = ((e.clientY - drag.current.y) / rect.height) * view!.h;
    drag.current = { x: e.clientX, y: e.clientY };
    setView((v) => v && { ...v, x: v.x - dx, y: v.y - dy });
  }

  return (
    <div className="relative">
      <svg
        ref={svgRef}
        role="img"
        aria-label="Preview of the dataset's linework"
        viewBox={`${view.x} ${view.y} ${view.w} ${view.h}`}
        preserveAspectRatio="xMidYMid meet"
        className="w-full cursor-grab touch-none rounded-md border border-rule bg-paper active:cursor-grabbing"
        style={{ height }}
        onWheel={onWheel}
        onPointerDown={(e) => {
          drag.current = { x: e.clientX, y: e.clientY };
          (e.target as Element).setPointerCapture?.(e.pointerId);
        }}
        onPointerMove={onPointerMove}
        onPointerUp={() => (drag.current = null)}
      >
        {paths.map((d, i) => (
          <path key={i} d={d} fill="none" stroke="var(--color-tide-600)" strokeWidth={stroke} strokeLinejoin="round" />
        ))}
      </svg>
      <button type="button" onClick={() => setView(base.view)} className="absolute right-2 top-2 rounded bg-card/90 px-2 py-1 text-xs text-ink-soft shadow">
        Reset view
      </button>
    </div>
  );
}

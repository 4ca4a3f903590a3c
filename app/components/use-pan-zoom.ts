import { useEffect, useRef, useState } from "react";

export interface ViewBox {
  x: number;
  y: number;
  w: number;
  h: number;
}

/**
 * Wheel to zoom about the pointer, drag to pan, for an SVG drawn in its own units: deviations of
 * a few metres on a line of some kilometres only show up close. Returns the current view box,
 * the handlers to spread on the <svg>, and a reset to the initial view.
 */
export function usePanZoom(initial: ViewBox | undefined, zoomStep = 1.2) {
  const [view, setView] = useState(initial);
  useEffect(() => setView(initial), [initial]);
  const drag = useRef<{ x: number; y: number } | null>(null);
  const svgRef = useRef<SVGSVGElement>(null);

  const handlers = {
    ref: svgRef,
    onWheel(e: React.WheelEvent<SVGSVGElement>) {
      const rect = svgRef.current!.getBoundingClientRect();
      const fx = (e.clientX - rect.left) / rect.width;
      const fy = (e.clientY - rect.top) / rect.height;
      const k = e.deltaY > 0 ? zoomStep : 1 / zoomStep;
      setView((v) => v && { x: v.x + v.w * fx * (1 - k), y: v.y + v.h * fy * (1 - k), w: v.w * k, h: v.h * k });
    },
    onPointerDown(e: React.PointerEvent<SVGSVGElement>) {
      drag.current = { x: e.clientX, y: e.clientY };
      (e.target as Element).setPointerCapture?.(e.pointerId);
    },
    onPointerMove(e: React.PointerEvent<SVGSVGElement>) {
      if (!drag.current) return;
      const rect = svgRef.current!.getBoundingClientRect();
      const start = drag.current;
      drag.current = { x: e.clientX, y: e.clientY };
      setView((v) => v && { ...v, x: v.x - ((e.clientX - start.x) / rect.width) * v.w, y: v.y - ((e.clientY - start.y) / rect.height) * v.h });
    },
    onPointerUp() {
      drag.current = null;
    },
  };
  return { view, handlers, reset: () => setView(initial) };
}

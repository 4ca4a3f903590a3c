/**
 * A uniform grid over boxes, for "what is near this point" queries in measure.ts.
 * Items are registered in every cell their box touches; a nearest search visits rings of cells
 * outward and stops once the ring is farther than the best distance found (common practice).
 */
import type { Box } from "./types";

export class GridIndex {
  private readonly cells = new Map<number, number[]>();
  private readonly x0: number;
  private readonly y0: number;
  private readonly size: number;
  private readonly nx: number;
  private readonly ny: number;

  constructor(
    private readonly boxes: Box[],
    extent: Box,
  ) {
    const w = Math.max(extent[2] - extent[0], 1e-12);
    const h = Math.max(extent[3] - extent[1], 1e-12);
    // About one item per cell on average, at most ~4M cells.
    const target = Math.max(1, Math.min(boxes.length, 4_000_000));
    this.size = Math.max(Math.sqrt((w * h) / target), Math.max(w, h) / 2048);
    this.x0 = extent[0];
    this.y0 = extent[1];
    this.nx = Math.max(1, Math.ceil(w / this.size) + 1);
    this.ny = Math.max(1, Math.ceil(h / this.size) + 1);
    boxes.forEach((b, id) => {
      const [i0, j0] = this.cell(b[0], b[1]);
      const [i1, j1] = this.cell(b[2], b[3]);
      for (let i = i0; i <= i1; i++)
        for (let j = j0; j <= j1; j++) {
          const k = j * this.nx + i;
          let list = this.cells.get(k);
          if (!list) this.cells.set(k, (list = []));
          list.push(id);
        }
    });
  }

  private cell(x: number, y: number): [number, number] {
    const i = Math.min(this.nx - 1, Math.max(0, Math.floor((x - this.x0) / this.size)));
    const j = Math.min(this.ny - 1, Math.max(0, Math.floor((y - this.y0) / this.size)));
    return [i, j];
  }

  /** Ids of items whose box may meet the query box (each once). */
  query(b: Box): number[] {
    const [i0, j0] = this.cell(b[0], b[1]);
    const [i1, j1] = this.cell(b[2], b[3]);
    const seen = new Set<number>();
    for (let i = i0; i <= i1; i++)
      for (let j = j0; j <= j1; j++) {
        const list = this.cells.get(j * this.nx + i);
        if (list) for (const id of list) seen.add(id);
      }
    return [...seen];
  }

  /**
   * Smallest `dist(id)` over items, visiting cells outward from (x, y); `dist` must be at least
   * the distance from (x, y) to the item's box.
   */
  nearest(x: number, y: number, dist: (id: number) => number): { id: number; distance: number } {
    let best = Infinity;
    let bestId = -1;
    const seen = new Set<number>();
    const [ci, cj] = this.cell(x, y);
    const maxRing = Math.max(this.nx, this.ny);
    // Distance from the point to the outside of the ring r: at least (r − 1)·size beyond the cell.
    for (let r = 0; r <= maxRing; r++) {
      if ((r - 1) * this.size > best) break;
      for (let i = ci - r; i <= ci + r; i++)
        for (let j = cj - r; j <= cj + r; j++) {
          if (Math.max(Math.abs(i - ci), Math.abs(j - cj)) !== r) continue;
          if (i < 0 || j < 0 || i >= this.nx || j >= this.ny) continue;
          const list = this.cells.get(j * this.nx + i);
          if (!list) continue;
          for (const id of list) {
            if (seen.has(id)) continue;
            seen.add(id);
            const b = this.boxes[id];
            const bx = Math.max(b[0] - x, 0, x - b[2]);
            const by = Math.max(b[1] - y, 0, y - b[3]);
            if (Math.hypot(bx, by) >= best) continue;
            const d = dist(id);
            if (d < best) {
              best = d;
              bestId = id;
            }
          }
        }
    }
    return { id: bestId, distance: best };
  }
}

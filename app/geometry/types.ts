/** A position `[x, y]` in some planar frame. */
export type Point = [number, number];
/** A displacement `[dx, dy]`; same shape as a point, kept apart by name. */
export type Vector = [number, number];
/** A Bézier segment given by its control points; degree = points − 1. */
export type Segment = Point[];
/** Segments joined end to start: the last control point of one is the first of the next. */
export type Path = Segment[];
/** Axis-aligned box `[minX, minY, maxX, maxY]`. */
export type Box = [number, number, number, number];

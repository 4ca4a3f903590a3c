// Minimal types for the parts of bezier-js 6 that the checks use (the package ships none).
declare module "bezier-js" {
  interface XY {
    x: number;
    y: number;
  }
  export class Bezier {
    constructor(...coords: number[]);
    points: XY[];
    get(t: number): XY;
    compute(t: number): XY;
    derivative(t: number): XY;
    length(): number;
    bbox(): { x: { min: number; max: number }; y: { min: number; max: number } };
    split(t: number): { left: Bezier; right: Bezier };
    split(t1: number, t2: number): Bezier;
    project(p: XY): XY & { t: number; d: number };
    curvature(t: number): { k: number; r: number };
  }
}

// The geometry core: pure functions, no I/O. See each module for its method and source.
export type { Box, Path, Point, Segment, Vector } from "./types";
export { bernsteinMaxAbs, bernsteinProduct, bernsteinRoots, bernsteinSplit, bernsteinValue, bernsteinWeights, binomial, pascalRow } from "./bernstein";
export { arcLength, boundingBox, controlBox, curvature, degree, derivative, evaluate, evaluateBernstein, gaussLegendre, hodograph, split, subSegment } from "./bezier";
export { nearestPoint, pointEdgeDistance, type Nearest } from "./nearest";
export { CORNER_ARM_TOLERANCES, DEFAULT_CORNER_ANGLE, detectCorners, fit, type FitOptions, type FitResult } from "./fit";
export { elevate, reduce, toDegree, type Reduction } from "./elevate";
export { discretisePath, discretiseSegment, pieceChordDeviation, wangSegmentCount, type DiscretiseResult } from "./discretise";
export { boxOf, describeCrs, localFrame, looksGeographic, normaliseCode, type CrsKind, type Frame } from "./crs";

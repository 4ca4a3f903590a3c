import { createReadStream } from "node:fs";
import { rm } from "node:fs/promises";
import type { CurveSegment, LinearGeometry, Position } from "../types";
import { asFeature, partIsRing, partsOf, segmentCount, vertexCount } from "./features";
import { FileSink, tempPathFor } from "./file-sink";
import { xmlEscape } from "./gml";
import { metadataDocument, type OutputMeta, type WriteResult } from "./meta";

/**
 * SVG output (SVG 1.1 path data, W3C). Two layers, `<g id="input">` (a feature's
 * `inputGeometry` member, when the caller supplies it) and `<g id="output">` (the curves): one
 * `<path>` per feature and layer. Curve segments become path commands by degree: 3 → `C`
 * (cubic), 2 → `Q`, 1 → `L`; a part whose segments are of higher degree (after `elevate`)
 * has no SVG command and is drawn from its discretised polyline (counted in the notes). Rings
 * end with `Z`.
 *
 * Coordinates: y is flipped (SVG's y axis points down) and everything is shifted so that the
 * first vertex written is the origin, which keeps the numbers small for renderers that work
 * in single precision: an SVG point (u, v) is the map point (u + x0, y0 − v), with (x0, y0)
 * in the root's `data-origin` attribute and in the metadata. The viewBox is the bounding box
 * of everything drawn, in those coordinates. Since the viewBox is only known at the end, the
 * paths go to a temporary file first and are copied after the header.
 */
export async function writeSvg(features: AsyncIterable<object>, path: string, meta: OutputMeta): Promise<Omit<WriteResult, "files" | "format" | "mediaType">> {
  const bodyPath = tempPathFor(path + ".body");
  const inputPath = tempPathFor(path + ".input");
  const body = await FileSink.create(bodyPath);
  const inputBody = await FileSink.create(inputPath);
  let origin: [number, number] | null = null;
  const box = { minX: Infinity, minY: Infinity, maxX: -Infinity, maxY: -Infinity };
  let count = 0;
  let vertices = 0;
  let segments = 0;
  let polylineParts = 0;
  let hasZ = false;
  const fmt = (v: number) => {
    const r = Math.round(v * 1e9) / 1e9;
    return Object.is(r, -0) ? "0" : String(r);
  };
  const pt = (p: Position) => {
    if (!origin) origin = [p[0]!, p[1]!];
    const u = p[0]! - origin[0];
    const v = origin[1] - p[1]!;
    if (u < box.minX) box.minX = u;
    if (u > box.maxX) box.maxX = u;
    if (v < box.minY) box.minY = v;
    if (v > box.maxY) box.maxY = v;
    if (p.length > 2) hasZ = true;
    return `${fmt(u)} ${fmt(v)}`;
  };
  const polylineD = (g: LinearGeometry) => {
    const ring = partIsRing(g);
    return partsOf(g)
      .map((part) => {
        const pts = ring && part.length > 1 ? part.slice(0, -1) : part;
        return `M${pt(pts[0]!)}${pts.slice(1).map((q) => ` L${pt(q)}`).join("")}${ring ? " Z" : ""}`;
      })
      .join(" ");
  };
  const curveD = (g: LinearGeometry, curves: CurveSegment[][]) => {
    const parts = partsOf(g);
    const ring = partIsRing(g);
    return parts
      .map((part, k) => {
        const segs = curves[k];
        if (!segs || segs.length === 0 || segs.some((s) => s.length > 4 || s.length < 2)) {
          polylineParts++;
          const pts = ring && part.length > 1 ? part.slice(0, -1) : part;
          return `M${pt(pts[0]!)}${pts.slice(1).map((q) => ` L${pt(q)}`).join("")}${ring ? " Z" : ""}`;
        }
        let d = `M${pt(segs[0]![0]!)}`;
        for (const s of segs) {
          const cmd = s.length === 4 ? "C" : s.length === 3 ? "Q" : "L";
          d += ` ${cmd}${s.slice(1).map(pt).join(" ")}`;
        }
        return ring ? d + " Z" : d;
      })
      .join(" ");
  };
  try {
    for await (const value of features) {
      const f = asFeature(value, count);
      const id = `f${count}`;
      const input = f.inputGeometry as LinearGeometry | undefined;
      if (input && Array.isArray(input.coordinates)) await inputBody.write(`<path id="${id}-input" d="${polylineD(input)}"/>\n`);
      const d = Array.isArray(f.curves) && f.curves.length ? curveD(f.geometry, f.curves) : polylineD(f.geometry);
      const title = f.properties && typeof f.properties.name === "string" ? `<title>${xmlEscape(f.properties.name)}</title>` : "";
      await body.write(`<path id="${id}" d="${d}">${title}</path>\n`);
      count++;
      vertices += vertexCount(f.geometry);
      segments += segmentCount(f.curves);
    }
    await body.close();
    await inputBody.close();
  } catch (error) {
    await Promise.all([body.abandon(), inputBody.abandon()]);
    await Promise.all([rm(bodyPath, { force: true }), rm(inputPath, { force: true })]);
    throw error;
  }
  const notes: string[] = [];
  if (polylineParts) notes.push(`${polylineParts} parts drawn from their polylines: SVG paths have no command for Bézier segments above degree 3`);
  if (hasZ) notes.push("Z values are not drawn (SVG is two-dimensional)");
  const o = origin ?? [0, 0];
  const doc = metadataDocument(meta, "svg", notes);
  doc.svgOrigin = { x: o[0], y: o[1], note: "map x = svg x + origin x; map y = origin y − svg y" };
  const w = Number.isFinite(box.minX) ? Math.max(box.maxX - box.minX, 1e-9) : 1;
  const h = Number.isFinite(box.minY) ? Math.max(box.maxY - box.minY, 1e-9) : 1;
  const pad = Math.max(w, h) * 0.02;
  const viewBox = Number.isFinite(box.minX) ? [box.minX - pad, box.minY - pad, w + 2 * pad, h + 2 * pad] : [0, 0, 1, 1];
  const out = await FileSink.create(path);
  try {
    await out.write(
      `<?xml version="1.0" encoding="UTF-8"?>\n` +
        `<svg xmlns="http://www.w3.org/2000/svg" viewBox="${viewBox.map(fmt).join(" ")}" data-origin="${fmt(o[0])} ${fmt(o[1])}" data-crs="${xmlEscape(String(doc.crs))}">\n` +
        `<title>${xmlEscape(meta.title ?? "Lissom output")}</title>\n` +
        `<metadata id="lissom-metadata">${JSON.stringify(doc).replace(/[<>&]/g, (c) => ({ "<": "&lt;", ">": "&gt;", "&": "&amp;" })[c]!)}</metadata>\n` +
        `<g id="input" fill="none" stroke="#9a9a9a" stroke-width="1" vector-effect="non-scaling-stroke">\n`,
    );
    for await (const chunk of createReadStream(inputPath)) await out.write(chunk as Buffer);
    await out.write(`</g>\n<g id="output" fill="none" stroke="#1f5fbf" stroke-width="1.5" vector-effect="non-scaling-stroke">\n`);
    for await (const chunk of createReadStream(bodyPath)) await out.write(chunk as Buffer);
    await out.write(`</g>\n</svg>\n`);
    await out.close();
  } catch (error) {
    await out.abandon();
    throw error;
  } finally {
    await Promise.all([rm(bodyPath, { force: true }), rm(inputPath, { force: true })]);
  }
  return { features: count, vertices, segments, bytes: out.bytes, notes };
}

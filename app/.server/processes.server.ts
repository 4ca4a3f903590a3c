import { z } from "zod";

/**
 * The processes Lissom offers through its OGC API - Processes interface (OGC 18-062r2,
 * Part 1: Core). Each process runs one built-in step on a dataset. Inputs are checked with
 * zod before anything is stored or queued.
 */
export const OUTPUT_FORMATS = ["geojson", "ndjson", "shapefile", "gml", "svg", "csv"] as const;
export const OUTPUT_FORMAT_LABELS: Record<(typeof OUTPUT_FORMATS)[number], string> = {
  geojson: "GeoJSON with curves",
  ndjson: "Newline-delimited GeoJSON",
  shapefile: "Shapefile (zip)",
  gml: "GML 3.2 with Bézier segments",
  svg: "SVG picture",
  csv: "CSV of control points",
};
const formats = z
  .array(z.enum(OUTPUT_FORMATS, { error: `formats: each must be one of ${OUTPUT_FORMATS.join(", ")}` }))
  .min(1, "formats: name at least one output format")
  .optional();

const datasetInput = z.string({ error: "dataset must be a dataset id (a string)" }).min(1, "dataset must be a dataset id");
const tolerance = z
  .number({ error: "tolerance must be a number of metres" })
  .finite("tolerance must be a finite number of metres")
  .positive("tolerance must be a positive number of metres")
  .max(100_000, "tolerance must be at most 100 km");

export const processes = {
  fit: {
    title: "Fit cubic Bézier curves",
    description:
      "Fits piecewise cubic Bézier curves to every line and ring of a dataset so that the fitted path stays within the tolerance of the input on the ground, both ways.",
    inputs: z.object({
      dataset: datasetInput,
      tolerance,
      cornerAngle: z.number({ error: "cornerAngle must be a number of degrees" }).min(0).max(180).optional(),
      formats,
    }),
    inputDescriptions: {
      dataset: { title: "Dataset", description: "Id of a dataset; its latest version is used.", schema: { type: "string" } },
      tolerance: { title: "Tolerance (m)", description: "Largest allowed distance on the ground between input and fitted path, in metres.", schema: { type: "number", exclusiveMinimum: 0 } },
      cornerAngle: { title: "Corner angle (°)", description: "Turns sharper than this are kept as corners.", schema: { type: "number", minimum: 0, maximum: 180 }, minOccurs: 0 },
      formats: {
        title: "Output formats",
        description: "Files to produce; GeoJSON with curves when none is named.",
        schema: { type: "array", items: { type: "string", enum: [...OUTPUT_FORMATS] }, minItems: 1 },
        minOccurs: 0,
      },
    },
    toSteps: (i: { tolerance: number; cornerAngle?: number }) => [
      { step: "fit" as const, params: { tolerance: i.tolerance, ...(i.cornerAngle !== undefined ? { cornerAngle: i.cornerAngle } : {}) } },
    ],
  },
} as const;

export type ProcessId = keyof typeof processes;

export function isProcessId(id: string): id is ProcessId {
  return Object.hasOwn(processes, id);
}

/** Turns zod issues into `field: message` lines. */
export function describeIssues(error: z.ZodError): { field: string; message: string }[] {
  return error.issues.map((i) => ({ field: i.path.join(".") || "(body)", message: i.message }));
}

export function processSummary(id: ProcessId) {
  const p = processes[id];
  return {
    id,
    title: p.title,
    description: p.description,
    version: "1.0.0",
    jobControlOptions: ["async-execute", "dismiss"],
    outputTransmission: ["reference"],
    links: [{ href: `/api/processes/${id}`, rel: "self", type: "application/json", title: "process description" }],
  };
}

export function processDescription(id: ProcessId) {
  return {
    ...processSummary(id),
    inputs: processes[id].inputDescriptions,
    outputs: {
      result: {
        title: "Fitted dataset",
        description:
          "One file per requested format. GeoJSON: one Feature per input Feature; geometry is the discretised curve, the foreign member `curves` holds each part's Bézier control points.",
        schema: { type: "string", contentMediaType: "application/geo+json" },
      },
    },
  };
}

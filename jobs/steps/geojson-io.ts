/**
 * GeoJSON reading and writing for the command line, behind one function each so other formats
 * can take their place. Reading takes the whole file (RFC 7946 FeatureCollection or a single
 * Feature); writing streams one feature at a time.
 */
import { createWriteStream } from "node:fs";
import { readFile, rename, unlink } from "node:fs/promises";
import { once } from "node:events";

/** Bad input: carries the file, the feature index when there is one, and the reason. */
export class InputError extends Error {
  constructor(
    readonly file: string,
    readonly featureIndex: number | null,
    readonly reason: string,
  ) {
    super(`${file}: ${featureIndex === null ? "" : `feature ${featureIndex}: `}${reason}`);
  }
}

export interface FeatureInput {
  /** The CRS named by the file's legacy `crs` member (GeoJSON 2008), if any, as written. */
  crsCode: string | null;
  features: unknown[];
}

export async function readFeatureFile(file: string): Promise<FeatureInput> {
  let text: string;
  try {
    text = await readFile(file, "utf8");
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new InputError(file, null, code === "ENOENT" ? "file not found" : `cannot read the file (${code ?? String(e)})`);
  }
  let doc: unknown;
  try {
    doc = JSON.parse(text);
  } catch (e) {
    throw new InputError(file, null, `not valid JSON (${(e as Error).message})`);
  }
  if (!doc || typeof doc !== "object") throw new InputError(file, null, "not a GeoJSON object");
  const d = doc as { type?: unknown; features?: unknown; crs?: unknown };
  let features: unknown[];
  if (d.type === "FeatureCollection") {
    if (!Array.isArray(d.features)) throw new InputError(file, null, "FeatureCollection has no features array");
    features = d.features;
  } else if (d.type === "Feature") {
    features = [doc];
  } else {
    throw new InputError(file, null, `expected a GeoJSON FeatureCollection or Feature, found type ${JSON.stringify(d.type ?? null)}`);
  }
  return { crsCode: legacyCrsName(d.crs), features };
}

function legacyCrsName(crs: unknown): string | null {
  if (!crs || typeof crs !== "object") return null;
  const c = crs as { type?: unknown; properties?: { name?: unknown } };
  if (c.type === "name" && typeof c.properties?.name === "string") return c.properties.name;
  return null;
}

export interface WriteOptions {
  /** Written as the legacy `crs` member when the data is not WGS84 longitude/latitude. */
  crsCode?: string | null;
  /** Extra top-level members (e.g. the step and tolerance). */
  members?: Record<string, unknown>;
}

/** Write a FeatureCollection, feature by feature, to a temporary file renamed into place at the end. */
export async function writeFeatureFile(file: string, features: Iterable<object> | AsyncIterable<object>, options: WriteOptions = {}): Promise<void> {
  const tmp = `${file}.${process.pid}.partial`;
  const out = createWriteStream(tmp, { encoding: "utf8" });
  const write = async (s: string) => {
    if (!out.write(s)) await once(out, "drain");
  };
  try {
    await write('{"type":"FeatureCollection"');
    if (options.crsCode && options.crsCode !== "EPSG:4326")
      await write(`,"crs":${JSON.stringify({ type: "name", properties: { name: ogcUrn(options.crsCode) } })}`);
    for (const [k, v] of Object.entries(options.members ?? {})) await write(`,${JSON.stringify(k)}:${JSON.stringify(v)}`);
    await write(',"features":[');
    let first = true;
    for await (const f of features) {
      await write((first ? "\n" : ",\n") + JSON.stringify(f));
      first = false;
    }
    await write("\n]}\n");
    out.end();
    await once(out, "finish");
    await rename(tmp, file);
  } catch (e) {
    out.destroy();
    await unlink(tmp).catch(() => {});
    throw e;
  }
}

function ogcUrn(code: string): string {
  const m = /^EPSG:(\d+)$/.exec(code);
  return m ? `urn:ogc:def:crs:EPSG::${m[1]}` : code;
}

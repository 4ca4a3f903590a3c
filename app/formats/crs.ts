import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import { dirname, join } from "node:path";
import proj4 from "proj4";

/**
 * CRS identifiers and definitions, through proj4. A code is what `DatasetSummary.crs.code`
 * holds and what `readFeatures(..., { crs })` accepts: `EPSG:<n>`, the OGC URN forms of it,
 * `OGC:CRS84`, or a WKT string (from a .prj file).
 */
export interface ResolvedCrs {
  /** Normalised code: `EPSG:4326` for every longitude/latitude WGS 84 spelling. */
  code: string;
  name: string;
  geographic: boolean;
  /** Metres per CRS unit along an axis (degrees: metres per degree of latitude, approximately). */
  metresPerUnit: number;
  /** What proj4 accepts for this CRS (a registered name). */
  proj4Name: string;
  /** The WKT when the CRS came from one. */
  wkt?: string;
}

const WGS84_CODES = new Set([
  "EPSG:4326",
  "OGC:CRS84",
  "CRS:84",
  "CRS84",
  "URN:OGC:DEF:CRS:OGC:1.3:CRS84",
  "URN:OGC:DEF:CRS:OGC::CRS84",
  "URN:OGC:DEF:CRS:EPSG::4326",
  "URN:OGC:DEF:CRS:EPSG:6.6:4326",
  "HTTP://WWW.OPENGIS.NET/DEF/CRS/OGC/1.3/CRS84",
  "HTTP://WWW.OPENGIS.NET/DEF/CRS/EPSG/0/4326",
  "WGS84",
]);

/** Turns the many spellings of an EPSG code into `EPSG:<n>`; other strings come back trimmed. */
export function normaliseCrsCode(input: string): string {
  const text = input.trim();
  const upper = text.toUpperCase();
  if (WGS84_CODES.has(upper)) return "EPSG:4326";
  const epsg =
    /^EPSG:{1,2}(\d+)$/.exec(upper) ??
    /^URN:OGC:DEF:CRS:EPSG:[\d.]*:(\d+)$/.exec(upper) ??
    /^HTTPS?:\/\/WWW\.OPENGIS\.NET\/DEF\/CRS\/EPSG\/[\d.]+\/(\d+)$/.exec(upper);
  if (epsg) return `EPSG:${Number(epsg[1])}`;
  return text;
}

/**
 * Definitions beyond proj4's built-in few. UTM zones on WGS 84 (EPSG:32601–32660 north,
 * 32701–32760 south) follow from the zone number (common practice: `+proj=utm +zone=N`).
 */
function ensureDefinition(code: string): boolean {
  if (proj4.defs(code)) return true;
  const fromIndex = epsgEntry(code);
  if (fromIndex?.proj4) {
    // Grid shift files are not available to proj4 here; without them proj4 applies no datum
    // shift, so conversions between datums are approximate (metres), while lengths and areas
    // within the CRS, which is what the steps use, are unaffected.
    const def = fromIndex.proj4.replace(/\s*\+nadgrids=\S+/g, "");
    try {
      proj4.defs(code, def);
      return true;
    } catch {
      return false;
    }
  }
  const utm = /^EPSG:(326|327)(\d\d)$/.exec(code);
  if (utm) {
    const zone = Number(utm[2]);
    if (zone >= 1 && zone <= 60) {
      const south = utm[1] === "327" ? " +south" : "";
      proj4.defs(code, `+proj=utm +zone=${zone}${south} +datum=WGS84 +units=m +no_defs +type=crs`);
      return true;
    }
  }
  return false;
}

interface EpsgEntry {
  code: string;
  name: string;
  kind: string;
  wkt?: string;
  proj4?: string;
  unit?: string;
}

let epsgDir: string | null | undefined;
const epsgCache = new Map<string, EpsgEntry | null>();

/**
 * One EPSG entry from the `epsg-index` package (EPSG registry data as WKT and proj4 strings,
 * one small JSON file per code, so nothing large is loaded).
 */
export function epsgEntry(code: string): EpsgEntry | null {
  const m = /^EPSG:(\d+)$/.exec(code);
  if (!m) return null;
  if (epsgCache.has(m[1]!)) return epsgCache.get(m[1]!)!;
  let entry: EpsgEntry | null = null;
  try {
    if (epsgDir === undefined) {
      const require = createRequire(import.meta.url);
      epsgDir = join(dirname(require.resolve("epsg-index/package.json")), "s");
    }
    if (epsgDir) entry = JSON.parse(readFileSync(join(epsgDir, `${m[1]}.json`), "utf8")) as EpsgEntry;
  } catch {
    entry = null;
  }
  epsgCache.set(m[1]!, entry);
  return entry;
}

/** WKT (OGC WKT 1) for a code, for .prj files: from `epsg-index`, or built for UTM zones. */
export function wktFor(code: string): string | null {
  const normal = normaliseCrsCode(code);
  const entry = epsgEntry(normal);
  if (entry?.wkt) return entry.wkt;
  return null;
}

let wktCounter = 0;
const wktNames = new Map<string, string>();

/**
 * Resolves a code or a WKT text. Returns `null` when proj4 does not know the CRS: the caller
 * refuses the file with its own message.
 */
export function resolveCrs(input: string): ResolvedCrs | null {
  const trimmed = input.trim();
  if (/^(PROJCS|GEOGCS|PROJCRS|GEOGCRS|GEODCRS|COMPD_CS|COMPOUNDCRS|LOCAL_CS)\s*\[/i.test(trimmed)) return resolveWkt(trimmed);
  if (trimmed.startsWith("WKT:")) return null;
  const code = normaliseCrsCode(trimmed);
  if (!ensureDefinition(code)) return null;
  const def = proj4.defs(code) as unknown as { projName?: string; title?: string; name?: string; units?: string; to_meter?: number; srsCode?: string };
  const named = epsgEntry(code)?.name;
  return describe(code, code, named ? { ...def, name: named } : def);
}

function resolveWkt(wkt: string): ResolvedCrs | null {
  let registered = wktNames.get(wkt);
  if (!registered) {
    registered = `LISSOM-WKT-${++wktCounter}`;
    try {
      proj4.defs(registered, wkt);
      // proj4 accepts some malformed text without complaint; building a converter proves it usable.
      proj4(registered, "EPSG:4326");
    } catch {
      return null;
    }
    const def = proj4.defs(registered) as unknown as { projName?: string } | undefined;
    if (!def || !def.projName) return null;
    wktNames.set(wkt, registered);
  }
  const def = proj4.defs(registered) as unknown as { projName?: string; name?: string; title?: string; units?: string; to_meter?: number; srsCode?: string; AUTHORITY?: Record<string, string> };
  const authority = epsgFromWkt(wkt);
  const name = def.name ?? def.srsCode ?? "unnamed CRS";
  const code = authority && ensureDefinition(authority) ? authority : `WKT:${name}`;
  return { ...describe(code, registered, def), wkt };
}

/** The outermost `AUTHORITY["EPSG","n"]` (WKT1) or `ID["EPSG",n]` (WKT2) of a WKT text. */
export function epsgFromWkt(wkt: string): string | null {
  // The outermost authority is the last one at nesting depth 1.
  let depth = 0;
  let found: string | null = null;
  const re = /(AUTHORITY|ID)\s*\[\s*"EPSG"\s*,\s*"?(\d+)"?\s*\]|[[\]]/gi;
  for (let m = re.exec(wkt); m; m = re.exec(wkt)) {
    if (m[0] === "[") depth++;
    else if (m[0] === "]") depth--;
    else if (depth === 1) found = `EPSG:${m[2]}`;
  }
  return found;
}

function describe(code: string, proj4Name: string, def: { projName?: string; title?: string; name?: string; units?: string; to_meter?: number; srsCode?: string }): ResolvedCrs {
  const geographic = def.projName === "longlat";
  // 111 320 m per degree at the equator (WGS 84 semi-major axis × π/180; common practice).
  const metresPerUnit = geographic ? 111_320 : (def.to_meter ?? unitToMetre(def.units));
  return { code, name: def.name ?? def.title ?? def.srsCode ?? code, geographic, metresPerUnit, proj4Name };
}

function unitToMetre(units: string | undefined): number {
  switch ((units ?? "m").toLowerCase()) {
    case "ft":
    case "foot":
      return 0.3048; // international foot, exact by definition
    case "us-ft":
    case "us survey foot":
      return 1200 / 3937; // US survey foot, exact by definition
    default:
      return 1;
  }
}

/** A function mapping positions of `from` into `to` (x, y only; other ordinates are kept). */
export function converter(from: ResolvedCrs, to: ResolvedCrs): (p: number[]) => number[] {
  const c = proj4(from.proj4Name, to.proj4Name);
  return (p) => {
    const [x, y] = c.forward([p[0]!, p[1]!]);
    return p.length > 2 ? [x!, y!, ...p.slice(2)] : [x!, y!];
  };
}

import proj4 from "proj4";
import { describe, expect, it } from "vitest";
import { normaliseCrsCode, resolveCrs } from "../../../app/formats";
import { converter, wktFor } from "../../../app/formats/crs";

// WKT of WGS 84 and of WGS 84 / UTM zone 30N, written from memory of their EPSG definitions.
const WGS84_WKT =
  'GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563]],PRIMEM["Greenwich",0],UNIT["degree",0.0174532925199433],AUTHORITY["EPSG","4326"]]';
const UTM30_WKT =
  'PROJCS["WGS 84 / UTM zone 30N",GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563]],PRIMEM["Greenwich",0],UNIT["degree",0.0174532925199433]],PROJECTION["Transverse_Mercator"],PARAMETER["latitude_of_origin",0],PARAMETER["central_meridian",-3],PARAMETER["scale_factor",0.9996],PARAMETER["false_easting",500000],PARAMETER["false_northing",0],UNIT["metre",1],AUTHORITY["EPSG","32630"]]';
// The Esri flavour desktop GIS writes into .prj files, without an authority code (from memory).
const ESRI_UTM33_WKT =
  'PROJCS["WGS_1984_UTM_Zone_33N",GEOGCS["GCS_WGS_1984",DATUM["D_WGS_1984",SPHEROID["WGS_1984",6378137.0,298.257223563]],PRIMEM["Greenwich",0.0],UNIT["Degree",0.0174532925199433]],PROJECTION["Transverse_Mercator"],PARAMETER["False_Easting",500000.0],PARAMETER["False_Northing",0.0],PARAMETER["Central_Meridian",15.0],PARAMETER["Scale_Factor",0.9996],PARAMETER["Latitude_Of_Origin",0.0],UNIT["Meter",1.0]]';

const lonLatPoints = [
  [-3, 0],
  [-3, 52.5],
  [-5.9, 49.9],
  [0.2, 58.7],
  [-1.5, 52.1],
];

describe("CRS from .prj WKT, through proj4", () => {
  it("names the spellings of WGS 84 and EPSG codes alike", () => {
    for (const s of ["EPSG:4326", "epsg:4326", "urn:ogc:def:crs:OGC:1.3:CRS84", "urn:ogc:def:crs:EPSG::4326", "http://www.opengis.net/def/crs/OGC/1.3/CRS84"]) expect(normaliseCrsCode(s)).toBe("EPSG:4326");
    expect(normaliseCrsCode("urn:ogc:def:crs:EPSG::27700")).toBe("EPSG:27700");
    expect(normaliseCrsCode("http://www.opengis.net/def/crs/EPSG/0/32630")).toBe("EPSG:32630");
  });

  it("reads WGS 84 as geographic", () => {
    expect(resolveCrs(WGS84_WKT)).toMatchObject({ code: "EPSG:4326", geographic: true });
  });

  it("round-trips UTM zone 30N: the central meridian maps to the false easting, and back", () => {
    const crs = resolveCrs(UTM30_WKT)!;
    expect(crs).toMatchObject({ code: "EPSG:32630", geographic: false, metresPerUnit: 1 });
    const wgs = resolveCrs("EPSG:4326")!;
    const toUtm = converter(wgs, crs);
    const back = converter(crs, wgs);
    // Transverse Mercator: the origin (equator on the central meridian) maps to (false easting, false northing).
    const [e0, n0] = toUtm([-3, 0]);
    expect(e0).toBeCloseTo(500000, 6);
    expect(n0).toBeCloseTo(0, 6);
    // Any point on the central meridian keeps easting 500 000.
    expect(toUtm([-3, 52.5])[0]).toBeCloseTo(500000, 6);
    // The same CRS from the EPSG registry (epsg-index's proj4 string) gives the same metres.
    const byCode = resolveCrs("EPSG:32630")!;
    const toUtmByCode = converter(wgs, byCode);
    for (const p of lonLatPoints) {
      const a = toUtm(p);
      const b = toUtmByCode(p);
      expect(Math.hypot(a[0]! - b[0]!, a[1]! - b[1]!)).toBeLessThan(1e-6);
      const r = back(a);
      expect(Math.abs(r[0]! - p[0]!)).toBeLessThan(1e-9);
      expect(Math.abs(r[1]! - p[1]!)).toBeLessThan(1e-9);
    }
  });

  it("reads an Esri-style UTM .prj without authority code as the same projection", () => {
    const crs = resolveCrs(ESRI_UTM33_WKT)!;
    expect(crs.code).toBe("WKT:WGS_1984_UTM_Zone_33N");
    expect(crs.geographic).toBe(false);
    const wgs = resolveCrs("EPSG:4326")!;
    const a = converter(wgs, crs)([15.5, 48.2]);
    const b = converter(wgs, resolveCrs("EPSG:32633")!)([15.5, 48.2]);
    expect(Math.hypot(a[0]! - b[0]!, a[1]! - b[1]!)).toBeLessThan(1e-3);
  });

  it("reads the British National Grid .prj and reproduces the Ordnance Survey worked example", () => {
    const wkt = wktFor("EPSG:27700")!;
    expect(wkt).toMatch(/^PROJCS\["OSGB36 \/ British National Grid"/);
    const crs = resolveCrs(wkt)!;
    expect(crs).toMatchObject({ code: "EPSG:27700", geographic: false });
    // Ordnance Survey, "A guide to coordinate systems in Great Britain", worked example
    // (Caister water tower, from memory): OSGB36 52°39'27.2531"N 1°43'4.5177"E is
    // E 651409.903 m, N 313177.270 m. Projected from OSGB36 longitude/latitude (EPSG:4277,
    // same datum, so no datum shift is involved).
    const osgb36 = resolveCrs(wktFor("EPSG:4277")!)!;
    expect(osgb36.geographic).toBe(true);
    const lat = 52 + 39 / 60 + 27.2531 / 3600;
    const lon = 1 + 43 / 60 + 4.5177 / 3600;
    const [e, n] = proj4(osgb36.proj4Name, crs.proj4Name, [lon, lat]);
    expect(e!).toBeCloseTo(651409.903, 2);
    expect(n!).toBeCloseTo(313177.27, 2);
    const [lon2, lat2] = proj4(crs.proj4Name, osgb36.proj4Name, [e!, n!]);
    // proj4's transverse Mercator inverse comes back to within a few millimetres here (1e-7° ≈ 1 cm).
    expect(Math.abs(lon2! - lon)).toBeLessThan(1e-7);
    expect(Math.abs(lat2! - lat)).toBeLessThan(1e-7);
  });

  it("returns null for text that is no CRS and for unknown codes", () => {
    expect(resolveCrs("Brindlewick local grid")).toBeNull();
    expect(resolveCrs("EPSG:999999")).toBeNull();
    expect(resolveCrs('PROJCS["x",GEOGCS["y"]]')).toBeNull();
  });
});

/**
 * Text encodings of .dbf attributes. The encoding comes from the .cpg file when there is one;
 * otherwise from the dBase header's language driver byte when it names a code page; otherwise
 * UTF-8, decoded strictly: attribute bytes that are not valid UTF-8 refuse the file rather than
 * turn into replacement characters. Decoding uses the WHATWG encodings of Node's TextDecoder.
 */
export const DEFAULT_DBF_ENCODING = "utf-8";

/** Maps a .cpg text (`UTF-8`, `1252`, `ANSI 1252`, `ISO-8859-1`, `CP1251`, `88591`) to a WHATWG label, or null. */
export function encodingFromCpg(text: string): string | null {
  const raw = text.replace(/^\uFEFF/, "").trim();
  if (!raw) return null;
  const t = raw.toLowerCase().replace(/^ansi\s*/, "").replace(/^(cp|windows-?|ms)(?=\d)/, "");
  let label: string;
  if (t === "utf-8" || t === "utf8" || t === "65001") label = "utf-8";
  else if (/^(874|125[0-8])$/.test(t)) label = `windows-${t}`;
  else if (t === "866") label = "ibm866";
  else if (t === "932" || t === "shift_jis" || t === "sjis") label = "shift_jis";
  else if (t === "936" || t === "gbk") label = "gbk";
  else if (t === "949") label = "euc-kr";
  else if (t === "950" || t === "big5") label = "big5";
  else {
    const iso = /^(?:iso)?8859(\d{1,2})$/.exec(t.replace(/[-_ ]/g, ""));
    label = iso ? `iso-8859-${iso[1]}` : raw;
  }
  try {
    return new TextDecoder(label).encoding;
  } catch {
    return null;
  }
}

/**
 * dBase language driver ids (header byte 29) that name a Windows code page, as written by
 * common desktop GIS exporters (from memory of the dBase IV/Visual FoxPro code page table).
 * Driver ids of DOS code pages without a WHATWG decoder (437, 850) are left out.
 */
const LDID: Record<number, string> = {
  0x03: "windows-1252",
  0x57: "windows-1252",
  0x58: "windows-1252",
  0x59: "windows-1252",
  0x13: "shift_jis",
  0x4d: "gbk",
  0x4e: "euc-kr",
  0x4f: "big5",
  0x65: "ibm866",
  0x7c: "windows-874",
  0xc8: "windows-1250",
  0xc9: "windows-1251",
  0xca: "windows-1254",
  0xcb: "windows-1253",
  0xcc: "windows-1257",
};

export function encodingFromLdid(ldid: number): string | null {
  return LDID[ldid] ?? null;
}

import { StringDecoder } from "node:string_decoder";
import { _ClarinetParser as ClarinetParser } from "@loaders.gl/json";

/**
 * Streams JSON text through the tokenizer of `@loaders.gl/json` (its event-based parser) and
 * builds values only as large as one unit: a root member, one element of the root's `features`
 * array, or one whole root value of a sequence. Memory therefore stays bounded by the largest
 * single feature, whatever the size of the file.
 *
 * Two modes:
 * - `document`: one root object (RFC 7946 GeoJSON text). Root members are handed over as they
 *   close; the elements of a root `features` array are handed over one by one and never kept.
 * - `sequence`: any number of root values one after another (newline-delimited GeoJSON, and
 *   RFC 8142 text sequences once the caller has blanked the record separators).
 *
 * The tokenizer reports no reliable character positions (its counters skip the fast paths for
 * strings), so problems are located by feature number and line, which it does count, and by
 * byte offset only where this module sees the bytes itself (NUL bytes).
 */

export type JsonPiece =
  /** document mode: a member of the root object other than a `features` array. */
  | { kind: "member"; key: string; value: unknown }
  /** document mode: the root `features` array has opened. */
  | { kind: "features-open" }
  /** document mode: one element of the root `features` array (0-based index). */
  | { kind: "feature"; index: number; value: unknown; line: number }
  /** document mode: the root closed (without its `features`); sequence mode: one root value. */
  | { kind: "root"; value: unknown; line: number };

/** Text that is not valid JSON, or not the shape this mode reads. */
export class JsonStreamError extends Error {
  constructor(
    readonly reason: string,
    readonly hint: string,
    /** 1-based line where the problem showed. */
    readonly line: number,
    /** Index of the feature (document mode) or root value (sequence mode) being read. */
    readonly unit?: number,
    /** Byte offset, when known exactly. */
    readonly offset?: number,
  ) {
    super(reason);
  }
}

/** The tokenizer's public shape as this module uses it (its typings omit the handler arguments). */
interface Tokenizer {
  write(text: string): unknown;
  close(): unknown;
  line: number;
  c: number | string;
}

interface Frame {
  /** null marks the streamed `features` array: its elements are handed over, not kept. */
  container: Record<string, unknown> | unknown[] | null;
  key: string | null;
  isArray: boolean;
  /** Line where the value opened (for features and sequence records). */
  line: number;
}

const SYNTAX_HINT = "Fix the JSON syntax there (NaN, Infinity and unquoted text are not allowed in JSON; an editor that checks JSON shows the exact place)";

export class JsonStream {
  private readonly tokenizer: Tokenizer;
  private readonly decoder = new StringDecoder("utf8");
  private readonly stack: Frame[] = [];
  /** The innermost open value (the last frame of `stack`), kept apart for speed. */
  private top: Frame | null = null;
  private out: JsonPiece[] = [];
  private rootDone = false;
  private features = 0;
  private roots = 0;
  private bytes = 0;
  /** Bytes read since the last unit was handed over, to bound the size of one unit. */
  private unitBytes = 0;
  /** A problem found part-way through a chunk: the units before it are handed over first. */
  private failure: JsonStreamError | null = null;

  constructor(
    private readonly mode: "document" | "sequence",
    /** The largest unit (feature, member, record) accepted, in bytes of text. */
    private readonly maxUnitBytes: number,
  ) {
    const handlers = {
      onopenobject: (firstKey: string | undefined) => this.open({}, firstKey),
      onkey: (key: string) => {
        this.top!.key = key;
      },
      oncloseobject: () => this.close(),
      onopenarray: () => this.open([], undefined),
      onclosearray: () => this.close(),
      onvalue: (value: unknown) => {
        // Most values are coordinates: push them straight into the open array.
        const top = this.top;
        if (top !== null && top.isArray) (top.container as unknown[]).push(value);
        else this.complete(value, this.tokenizer.line);
      },
      onerror: (error: Error) => {
        throw error;
      },
    };
    this.tokenizer = new ClarinetParser(handlers as never) as unknown as Tokenizer;
  }

  /** Feeds the next bytes; returns the units completed by them. */
  push(bytes: Buffer): JsonPiece[] {
    if (this.failure) throw this.failure;
    const nul = bytes.indexOf(0);
    if (nul >= 0) {
      throw new JsonStreamError("the text holds a NUL byte (0x00), which JSON text never contains", "The file is binary or damaged; export it again as GeoJSON text", this.tokenizer.line, this.unitIndex(), this.bytes + nul);
    }
    let text = this.decoder.write(bytes);
    // RFC 8259 §8.1: a byte order mark before the text may be ignored; editors on some systems add one.
    if (this.bytes === 0 && text.charCodeAt(0) === 0xfeff) text = text.slice(1);
    this.bytes += bytes.length;
    this.unitBytes += bytes.length;
    this.write(text);
    if (this.failure) return this.drain();
    if (this.stack.length > 0 && this.unitBytes > this.maxUnitBytes) {
      const mb = Math.round(this.maxUnitBytes / 1e6);
      this.failure = new JsonStreamError(
        this.inFeatures() ? `the feature is larger than ${mb} MB` : this.mode === "sequence" ? `the record is larger than ${mb} MB` : `the GeoJSON object holds more than ${mb} MB outside a "features" array`,
        "Split very large geometries into several features (a FeatureCollection or newline-delimited GeoJSON streams feature by feature)",
        this.tokenizer.line,
        this.unitIndex(),
      );
    }
    return this.drain();
  }

  /** Call when the input ends; throws if the text stopped inside a value. */
  end(): JsonPiece[] {
    if (this.failure) throw this.failure;
    this.write(this.decoder.end());
    if (this.failure) return this.drain();
    if (this.stack.length > 0) {
      const unit = this.unitIndex();
      const inside = this.inFeatures() ? ` inside feature ${unit}` : this.mode === "sequence" ? ` inside record ${unit}` : "";
      throw new JsonStreamError(`the file ends unexpectedly${inside} (unclosed object or array)`, "The file looks truncated; upload the complete file", this.tokenizer.line, unit, this.bytes);
    }
    if (this.mode === "document" && !this.rootDone) {
      throw new JsonStreamError("the file holds no JSON object", "Upload a GeoJSON file with a FeatureCollection, a Feature or a geometry", this.tokenizer.line, undefined, this.bytes);
    }
    return this.drain();
  }

  /** Index of the unit being read: the feature in document mode, the root value in sequence mode. */
  unitIndex(): number | undefined {
    if (this.mode === "sequence") return this.stack.length > 0 ? this.roots : undefined;
    return this.inFeatures() && this.stack.length > 2 ? this.features : undefined;
  }

  private drain(): JsonPiece[] {
    const out = this.out;
    this.out = [];
    return out;
  }

  /** Problems are kept in `failure`, so the units completed earlier in the same text still reach the caller. */
  private write(text: string): void {
    if (!text) return;
    try {
      this.tokenizer.write(text);
    } catch (error) {
      this.failure = error instanceof JsonStreamError ? error : this.syntaxError(error as Error);
    }
  }

  /** Throws the problem found in the last text, if any; call after handling what `push` returned. */
  check(): void {
    if (this.failure) throw this.failure;
  }

  private inFeatures(): boolean {
    return this.mode === "document" && this.stack.length >= 2 && this.stack[1]!.container === null;
  }

  private open(container: Record<string, unknown> | unknown[], firstKey: string | undefined): void {
    const depth = this.stack.length;
    const line = this.tokenizer.line;
    if (depth === 0) {
      if (this.mode === "document") {
        if (this.rootDone) {
          throw new JsonStreamError(
            `extra content after the end of the GeoJSON object (found '${Array.isArray(container) ? "[" : "{"}')`,
            "The file holds several JSON values; if it is newline-delimited GeoJSON, name it .ndjson (or .geojsonl), otherwise keep one object per file",
            line,
          );
        }
        if (Array.isArray(container)) {
          throw new JsonStreamError("the file is a JSON array, not a GeoJSON object", "GeoJSON text is one object: a FeatureCollection, a Feature or a geometry (RFC 7946 §2)", line);
        }
      } else if (Array.isArray(container)) {
        throw new JsonStreamError(`record ${this.roots} is a JSON array, not a GeoJSON object`, "Each record must be one Feature, geometry or FeatureCollection object", line, this.roots);
      }
    } else if (this.mode === "document" && depth === 1 && Array.isArray(container) && this.stack[0]!.key === "features") {
      this.top = { container: null, key: null, isArray: false, line };
      this.stack.push(this.top);
      this.out.push({ kind: "features-open" });
      return;
    }
    this.top = { container, key: firstKey ?? null, isArray: Array.isArray(container), line };
    this.stack.push(this.top);
  }

  private close(): void {
    const frame = this.stack.pop()!;
    this.top = this.stack.length > 0 ? this.stack[this.stack.length - 1]! : null;
    if (frame.container === null) return; // the streamed features array: nothing kept
    this.complete(frame.container, frame.line);
  }

  private complete(value: unknown, line: number): void {
    const parent = this.top;
    if (!parent) {
      this.unitBytes = 0;
      if (this.mode === "document") this.rootDone = true;
      this.out.push({ kind: "root", value, line });
      this.roots++;
      return;
    }
    if (parent.container === null) {
      this.unitBytes = 0;
      this.out.push({ kind: "feature", index: this.features++, value, line });
      return;
    }
    if (parent.isArray) {
      (parent.container as unknown[]).push(value);
      return;
    }
    const container = parent.container as Record<string, unknown>;
    const key = parent.key!;
    // Keep "__proto__" an own member, as JSON.parse does, instead of setting the prototype.
    if (key === "__proto__") Object.defineProperty(container, key, { value, enumerable: true, writable: true, configurable: true });
    else container[key] = value;
    parent.key = null;
    if (this.mode === "document" && this.stack.length === 1) {
      this.unitBytes = 0;
      this.out.push({ kind: "member", key, value });
    }
  }

  /** Turns the tokenizer's terse messages ("Bad value") into a reason a person can act on. */
  private syntaxError(error: Error): JsonStreamError {
    const raw = String(error.message).split("\n")[0] ?? "";
    const code = this.tokenizer.c;
    const ch = typeof code === "number" && code > 0 ? String.fromCharCode(code) : "";
    const found = describeChar(ch);
    const line = this.tokenizer.line;
    const unit = this.unitIndex();
    if (this.rootDone && this.mode === "document") {
      return new JsonStreamError(`extra content after the end of the GeoJSON object (found ${found})`, "Remove what follows the closing '}' of the GeoJSON object", line);
    }
    let reason: string;
    // The tokenizer opens an object only once its first key has been read, so a problem in that
    // first key sits in the feature about to open.
    let at = unit ?? (this.inFeatures() && this.stack.length === 2 ? this.features : undefined);
    if (ch === "N" || ch === "I" || /started with (N|I)/.test(raw) || (raw === "Invalid symbol in number" && ch === "I")) {
      reason = `${ch === "N" ? "'NaN'" : "'Infinity'"} is not a JSON number (JSON has no NaN or Infinity)`;
    } else if (raw === "Bad array") {
      const between = this.mode === "document" && this.stack.length === 2 && this.stack[1]!.container === null;
      reason = `expected ',' or ']' ${between ? "between features" : "in an array"}, found ${found}`;
      if (between && this.features > 0) at = this.features - 1;
    } else if (raw === "Bad object") {
      reason = `expected ',' or '}' in an object, found ${found}`;
    } else if (raw.startsWith("Malformed object key")) {
      reason = `an object key must be text in double quotes, found ${found}`;
    } else if (raw.startsWith("Non-whitespace before")) {
      reason = this.mode === "document" ? `the text does not start with a JSON object (found ${found})` : `record ${this.roots} does not start with a JSON object (found ${found})`;
    } else if (raw === "Bad value" || raw.startsWith("Invalid true") || raw.startsWith("Invalid false") || raw.startsWith("Invalid null")) {
      reason = `unexpected ${found} where a value should be (text must be in double quotes)`;
    } else {
      reason = raw.charAt(0).toLowerCase() + raw.slice(1);
    }
    return new JsonStreamError(`invalid JSON: ${reason}`, SYNTAX_HINT, line, at);
  }
}

function describeChar(ch: string): string {
  if (!ch) return "the end of the text";
  const code = ch.charCodeAt(0);
  if (ch === "'") return `"'"`;
  if (code >= 0x20 && code < 0x7f) return `'${ch}'`;
  return `U+${code.toString(16).toUpperCase().padStart(4, "0")}`;
}

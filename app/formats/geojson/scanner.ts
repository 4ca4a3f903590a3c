/**
 * A byte-level splitter for GeoJSON text. It walks the bytes once, tracking only nesting depth
 * and string state, and cuts the text into the root object's members and, inside the root's
 * `features` array, one slice per Feature. Each slice is then parsed with `JSON.parse`, which
 * does the full syntax check. This keeps memory bounded by the largest single Feature and reads
 * at `JSON.parse`'s own speed or better (short-lived per-feature objects are cheap to collect).
 * A token-by-token streaming parser (the `@loaders.gl/json` streaming parser, kept as a
 * reference in tests/bench/formats.bench.ts) read the same files at about a third of this
 * splitter's speed, and its error positions proved unreliable, so syntax errors are located by
 * `json-error.ts` once `JSON.parse` has refused a slice.
 *
 * The splitter checks the structure it walks (root is an object, members separated by commas,
 * `features` elements separated by commas, nothing after the root); the text inside each slice
 * is checked by `JSON.parse`.
 */

export type ScanEvent =
  /** A root member other than `features` (its value's text, to be parsed by the caller). */
  | { kind: "member"; key: string; text: string; offset: number }
  /** The root `features` array has opened. */
  | { kind: "features-open"; offset: number }
  /** One element of the root `features` array. */
  | { kind: "feature"; index: number; text: string; offset: number }
  /** The root object closed. */
  | { kind: "end"; offset: number };

export class ScanError extends Error {
  constructor(
    readonly reason: string,
    readonly offset: number,
    readonly hint: string,
    /** The feature being read when the problem showed, if any. */
    readonly feature?: number,
  ) {
    super(reason);
  }
}

const QUOTE = 0x22;
const BACKSLASH = 0x5c;
const LBRACE = 0x7b;
const RBRACE = 0x7d;
const LBRACKET = 0x5b;
const RBRACKET = 0x5d;
const COMMA = 0x2c;
const COLON = 0x3a;

const enum Mode {
  Start,
  RootKey, // expecting a key or `}`
  RootColon,
  RootValue,
  RootAfter, // expecting `,` or `}`
  FeaturesElement, // expecting an element or `]`
  FeaturesAfter, // expecting `,` or `]`
  Done,
}

const enum Capture {
  None,
  Key,
  Container,
  String,
  Scalar,
}

function isSpace(b: number): boolean {
  return b === 0x20 || b === 0x0a || b === 0x0d || b === 0x09;
}

export class GeoJSONScanner {
  private depth = 0;
  private inString = false;
  private escape = false;
  private mode = Mode.Start;
  private base = 0;
  private capture = Capture.None;
  private captureDepth = 0;
  private captureStart = 0;
  private captureOffset = 0;
  private captureBytes = 0;
  private parts: Buffer[] = [];
  private key = "";
  private featureIndex = 0;
  private afterComma = false;
  private sawBom = false;
  events: ScanEvent[] = [];

  constructor(
    /** Largest slice (one Feature, one root member) accepted, in bytes. */
    private readonly maxSliceBytes: number,
  ) {}

  /** Feature index being read, or undefined outside `features`. */
  get currentFeature(): number | undefined {
    return this.mode === Mode.FeaturesElement || this.mode === Mode.FeaturesAfter ? this.featureIndex : undefined;
  }

  push(chunk: Buffer): ScanEvent[] {
    this.events = [];
    let i = 0;
    const n = chunk.length;
    if (this.base === 0 && !this.sawBom && n >= 3 && chunk[0] === 0xef && chunk[1] === 0xbb && chunk[2] === 0xbf) {
      i = 3;
      this.sawBom = true;
    }
    for (; i < n; i++) {
      const b = chunk[i]!;
      if (this.inString) {
        if (this.escape) this.escape = false;
        else if (b === BACKSLASH) this.escape = true;
        else if (b === QUOTE) {
          this.inString = false;
          if (this.capture === Capture.Key) this.finishKey(chunk, i + 1);
          else if (this.capture === Capture.String && this.depth === this.captureDepth) this.finishCapture(chunk, i + 1);
        }
        continue;
      }
      // Fast path: inside a captured container only depth and strings matter.
      if (this.capture === Capture.Container) {
        if (b === QUOTE) this.inString = true;
        else if (b === LBRACE || b === LBRACKET) this.depth++;
        else if (b === RBRACE || b === RBRACKET) {
          this.depth--;
          if (this.depth === this.captureDepth) this.finishCapture(chunk, i + 1);
        }
        continue;
      }
      if (this.capture === Capture.Scalar) {
        if (isSpace(b) || b === COMMA || b === RBRACE || b === RBRACKET) this.finishCapture(chunk, i);
        else continue;
      }
      if (isSpace(b)) continue;
      this.structural(chunk, i, b);
    }
    if (this.capture !== Capture.None) {
      const piece = chunk.subarray(this.captureStart);
      this.captureBytes += piece.length;
      this.parts.push(piece);
      this.captureStart = 0;
      this.checkSize();
    }
    this.base += n;
    return this.events;
  }

  /** Call when the input ends; throws if the text stopped early. */
  end(): ScanEvent[] {
    this.events = [];
    if (this.mode === Mode.Start) throw new ScanError("the file is empty", this.base, "Upload a GeoJSON file with a FeatureCollection, a Feature or a geometry");
    if (this.mode !== Mode.Done) {
      throw new ScanError(
        `the file ends unexpectedly${this.currentFeature !== undefined ? ` inside feature ${this.currentFeature}` : ""} (unclosed ${this.inString ? "string" : "object or array"})`,
        this.base,
        "The file looks truncated; upload the complete file",
        this.currentFeature,
      );
    }
    return this.events;
  }

  private structural(chunk: Buffer, i: number, b: number): void {
    const offset = this.base + i;
    switch (this.mode) {
      case Mode.Start:
        if (b === LBRACE) {
          this.depth = 1;
          this.mode = Mode.RootKey;
          this.afterComma = false;
          return;
        }
        if (b === LBRACKET) throw new ScanError("the file is a JSON array, not a GeoJSON object", offset, "GeoJSON text is one object: a FeatureCollection, a Feature or a geometry (RFC 7946 §2)");
        throw new ScanError(`the file does not start with a JSON object (found ${describeByte(b)})`, offset, "Upload GeoJSON text (RFC 7946); check that the file is not another format renamed to .geojson");
      case Mode.RootKey:
        if (b === QUOTE) {
          this.startCapture(Capture.Key, chunk, i);
          this.inString = true;
          return;
        }
        if (b === RBRACE && !this.afterComma) return this.closeRoot(offset);
        throw this.syntax(offset, b, "a member name in double quotes");
      case Mode.RootColon:
        if (b === COLON) {
          this.mode = Mode.RootValue;
          return;
        }
        throw this.syntax(offset, b, "':' after the member name");
      case Mode.RootValue:
        if (this.key === "features" && b === LBRACKET) {
          this.depth = 2;
          this.mode = Mode.FeaturesElement;
          this.afterComma = false;
          this.events.push({ kind: "features-open", offset });
          return;
        }
        this.startValue(chunk, i, b);
        this.mode = Mode.RootAfter;
        return;
      case Mode.RootAfter:
        if (b === COMMA) {
          this.mode = Mode.RootKey;
          this.afterComma = true;
          return;
        }
        if (b === RBRACE) return this.closeRoot(offset);
        throw this.syntax(offset, b, "',' or '}' after a member");
      case Mode.FeaturesElement:
        if (b === RBRACKET && !this.afterComma) {
          this.depth = 1;
          this.mode = Mode.RootAfter;
          return;
        }
        if (b === RBRACKET || b === COMMA || b === RBRACE || b === COLON) throw this.syntax(offset, b, "a Feature object");
        this.startValue(chunk, i, b);
        this.mode = Mode.FeaturesAfter;
        return;
      case Mode.FeaturesAfter:
        if (b === COMMA) {
          this.featureIndex++;
          this.mode = Mode.FeaturesElement;
          this.afterComma = true;
          return;
        }
        if (b === RBRACKET) {
          this.featureIndex++;
          this.depth = 1;
          this.mode = Mode.RootAfter;
          return;
        }
        throw this.syntax(offset, b, "',' or ']' between features");
      case Mode.Done:
        throw new ScanError(
          `extra content after the end of the GeoJSON object (${describeByte(b)})`,
          offset,
          b === LBRACE
            ? "The file holds several JSON objects; if it is newline-delimited GeoJSON, name it .ndjson (or .geojsonl), otherwise keep one object per file"
            : "Remove what follows the closing '}' of the GeoJSON object",
        );
    }
  }

  private syntax(offset: number, b: number, expected: string): ScanError {
    return new ScanError(`invalid JSON: expected ${expected}, found ${describeByte(b)}`, offset, "Fix the JSON syntax at this position (an editor that checks JSON will show it)", this.currentFeature);
  }

  private closeRoot(offset: number): void {
    this.depth = 0;
    this.mode = Mode.Done;
    this.events.push({ kind: "end", offset });
  }

  private startValue(chunk: Buffer, i: number, b: number): void {
    if (b === LBRACE || b === LBRACKET) {
      this.startCapture(Capture.Container, chunk, i);
      this.depth++;
    } else if (b === QUOTE) {
      this.startCapture(Capture.String, chunk, i);
      this.inString = true;
    } else {
      this.startCapture(Capture.Scalar, chunk, i);
    }
  }

  private startCapture(kind: Capture, chunk: Buffer, i: number): void {
    this.capture = kind;
    this.captureDepth = this.depth;
    this.captureStart = i;
    this.captureOffset = this.base + i;
    this.captureBytes = 0;
    this.parts = [];
  }

  private take(chunk: Buffer, end: number): string {
    const last = chunk.subarray(this.captureStart, end);
    const text = this.parts.length === 0 ? last.toString("utf8") : Buffer.concat([...this.parts, last]).toString("utf8");
    this.parts = [];
    this.capture = Capture.None;
    return text;
  }

  private finishKey(chunk: Buffer, end: number): void {
    const text = this.take(chunk, end);
    this.key = JSON.parse(text) as string;
    this.mode = Mode.RootColon;
  }

  private finishCapture(chunk: Buffer, end: number): void {
    this.captureBytes += end - this.captureStart;
    this.checkSize();
    const offset = this.captureOffset;
    const text = this.take(chunk, end);
    if (this.mode === Mode.FeaturesAfter) this.events.push({ kind: "feature", index: this.featureIndex, text, offset });
    else this.events.push({ kind: "member", key: this.key, text, offset });
  }

  private checkSize(): void {
    if (this.captureBytes > this.maxSliceBytes) {
      const mb = Math.round(this.maxSliceBytes / 1e6);
      throw new ScanError(
        this.currentFeature !== undefined ? `the feature is larger than ${mb} MB` : `the member "${this.key}" is larger than ${mb} MB`,
        this.captureOffset,
        "Split very large geometries into several features (a FeatureCollection or newline-delimited GeoJSON streams feature by feature)",
        this.currentFeature,
      );
    }
  }
}

export function describeByte(b: number): string {
  if (b >= 0x20 && b < 0x7f) return `'${String.fromCharCode(b)}'`;
  return `byte 0x${b.toString(16).padStart(2, "0")}`;
}

/**
 * Finds where and why a JSON text (RFC 8259) is invalid, once `JSON.parse` has refused it:
 * `JSON.parse`'s own messages in Node 20 often give no position. A small recursive-descent
 * check over the grammar of RFC 8259 §2–§7; it runs only on text already known to be bad.
 */
export interface JsonProblem {
  /** Character index in the text. */
  index: number;
  message: string;
}

export function locateJsonError(text: string): JsonProblem | null {
  let i = 0;
  const n = text.length;
  const fail = (message: string): never => {
    throw { index: i, message } satisfies JsonProblem;
  };
  const found = (): string => {
    if (i >= n) return "the end of the text";
    const rest = text.slice(i, i + 12);
    const word = /^[A-Za-z_+\-.\d]+/.exec(rest)?.[0];
    return word ? `'${word}'` : `'${text[i]}'`;
  };
  const ws = () => {
    while (i < n) {
      const c = text.charCodeAt(i);
      if (c === 0x20 || c === 0x0a || c === 0x0d || c === 0x09) i++;
      else break;
    }
  };
  const value = (depth: number): void => {
    if (depth > 10_000) fail("nesting deeper than 10 000 levels");
    ws();
    const c = text[i];
    if (c === "{") {
      i++;
      ws();
      if (text[i] === "}") {
        i++;
        return;
      }
      for (;;) {
        ws();
        if (text[i] !== '"') fail(`expected a member name in double quotes, found ${found()}`);
        string();
        ws();
        if (text[i] !== ":") fail(`expected ':' after a member name, found ${found()}`);
        i++;
        value(depth + 1);
        ws();
        if (text[i] === ",") {
          i++;
          continue;
        }
        if (text[i] === "}") {
          i++;
          return;
        }
        fail(`expected ',' or '}' in an object, found ${found()}`);
      }
    }
    if (c === "[") {
      i++;
      ws();
      if (text[i] === "]") {
        i++;
        return;
      }
      for (;;) {
        value(depth + 1);
        ws();
        if (text[i] === ",") {
          i++;
          continue;
        }
        if (text[i] === "]") {
          i++;
          return;
        }
        fail(`expected ',' or ']' in an array, found ${found()}`);
      }
    }
    if (c === '"') return string();
    if (c === "-" || (c !== undefined && c >= "0" && c <= "9")) return number();
    for (const word of ["true", "false", "null"]) {
      if (text.startsWith(word, i)) {
        i += word.length;
        return;
      }
    }
    if (/^-?(NaN|Infinity)/.test(text.slice(i, i + 9))) fail(`${found()} is not a JSON number (JSON has no NaN or Infinity)`);
    fail(i >= n ? "the text ends where a value was expected" : `expected a value, found ${found()}`);
  };
  const string = () => {
    i++;
    while (i < n) {
      const c = text.charCodeAt(i);
      if (c === 0x22) {
        i++;
        return;
      }
      if (c === 0x5c) {
        const e = text[i + 1];
        if (e === "u") {
          if (!/^[0-9a-fA-F]{4}$/.test(text.slice(i + 2, i + 6))) fail("invalid \\u escape in a string");
          i += 6;
          continue;
        }
        if (e === undefined || !'"\\/bfnrt'.includes(e)) fail(`invalid escape '\\${e ?? ""}' in a string`);
        i += 2;
        continue;
      }
      if (c < 0x20) fail("a control character inside a string (unescaped line break?)");
      i++;
    }
    fail("a string is not closed");
  };
  const number = () => {
    const m = /^-?(0|[1-9]\d*)(\.\d+)?([eE][+-]?\d+)?/.exec(text.slice(i, i + 400));
    if (!m) {
      if (/^-?(NaN|Infinity)/.test(text.slice(i, i + 9))) fail(`${found()} is not a JSON number (JSON has no NaN or Infinity)`);
      fail(`malformed number ${found()}`);
    }
    i += m![0].length;
    const next = text[i];
    if (next !== undefined && /[\w.]/.test(next)) fail(`malformed number ${found()}`);
  };
  try {
    value(0);
    ws();
    if (i < n) fail(`unexpected ${found()} after the end of the value`);
    return null;
  } catch (e) {
    if (e && typeof e === "object" && "index" in e) return e as JsonProblem;
    throw e;
  }
}

/** Parses JSON; on failure returns the located problem instead of throwing. */
export function parseJson(text: string): { ok: true; value: unknown } | { ok: false; problem: JsonProblem } {
  try {
    return { ok: true, value: JSON.parse(text) };
  } catch {
    return { ok: false, problem: locateJsonError(text) ?? { index: 0, message: "invalid JSON" } };
  }
}

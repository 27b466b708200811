/**
 * A strict JSON reader that remembers where each value sits in the text, so a schema error can point
 * the editor at a line and column, and that reports duplicate keys (JSON.parse silently keeps the last
 * one, which would hide a typo or a bad merge). Grammar: RFC 8259.
 */

export type TextPosition = { line: number; column: number; offset: number };

export class JsonTextError extends Error {
  readonly line: number;
  readonly column: number;
  readonly offset: number;
  constructor(message: string, pos: TextPosition) {
    super(`line ${pos.line}, column ${pos.column}: ${message}`);
    this.name = "JsonTextError";
    this.line = pos.line;
    this.column = pos.column;
    this.offset = pos.offset;
  }
}

export type PathSegment = string | number;

export type DuplicateKey = { path: PathSegment[]; position: TextPosition };

export type JsonWithPositions = {
  value: unknown;
  /** Position of each value, keyed by formatPath(path); for object members, the position of the key. */
  positions: Map<string, TextPosition>;
  duplicates: DuplicateKey[];
};

const MAX_DEPTH = 256;
const NUMBER_RE = /-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?/y;
const PLAIN_KEY_RE = /^[A-Za-z0-9_-]+$/;

/** `lights[2].shape.radius`; keys outside [A-Za-z0-9_-] are written as `["a b"]`. */
export function formatPath(path: readonly PathSegment[]): string {
  let out = "";
  for (const seg of path) {
    if (typeof seg === "number") out += `[${seg}]`;
    else if (PLAIN_KEY_RE.test(seg)) out += out === "" ? seg : `.${seg}`;
    else out += `[${JSON.stringify(seg)}]`;
  }
  return out;
}

export function parseJsonWithPositions(text: string): JsonWithPositions {
  let i = 0;
  // Line starts are tracked lazily: positions are computed from the offset when recorded.
  const lineStarts: number[] = [0];
  for (let k = 0; k < text.length; k++) if (text.charCodeAt(k) === 10) lineStarts.push(k + 1);

  const posAt = (offset: number): TextPosition => {
    let lo = 0;
    let hi = lineStarts.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (lineStarts[mid]! <= offset) lo = mid;
      else hi = mid - 1;
    }
    return { line: lo + 1, column: offset - lineStarts[lo]! + 1, offset };
  };
  const fail = (message: string, offset = i): never => {
    throw new JsonTextError(message, posAt(offset));
  };
  const describeChar = (offset: number): string =>
    offset >= text.length ? "end of text" : `character ${JSON.stringify(text[offset])}`;

  const positions = new Map<string, TextPosition>();
  const duplicates: DuplicateKey[] = [];

  const skipWs = () => {
    while (i < text.length) {
      const c = text.charCodeAt(i);
      if (c === 32 || c === 9 || c === 10 || c === 13) i++;
      else break;
    }
  };

  const readString = (): string => {
    const start = i;
    i++; // opening quote
    let hasEscape = false;
    while (true) {
      if (i >= text.length) fail("unterminated string", start);
      const c = text.charCodeAt(i);
      if (c === 34) break;
      if (c < 0x20) fail("control character in string (escape it)");
      if (c === 92) {
        hasEscape = true;
        const e = text[i + 1];
        if (e === "u") {
          if (!/^[0-9a-fA-F]{4}$/.test(text.slice(i + 2, i + 6))) fail("invalid \\u escape");
          i += 6;
        } else if (e !== undefined && '"\\/bfnrt'.includes(e)) i += 2;
        else fail("invalid escape sequence");
      } else i++;
    }
    i++; // closing quote
    const raw = text.slice(start, i);
    return hasEscape ? (JSON.parse(raw) as string) : raw.slice(1, -1);
  };

  const readValue = (path: PathSegment[], depth: number): unknown => {
    skipWs();
    if (depth > MAX_DEPTH) fail(`nested deeper than ${MAX_DEPTH} levels`);
    if (i >= text.length) fail("unexpected end of text, expected a value");
    const c = text[i];
    if (c === "{") {
      i++;
      const obj: Record<string, unknown> = {};
      const seen = new Set<string>();
      skipWs();
      if (text[i] === "}") {
        i++;
        return obj;
      }
      while (true) {
        skipWs();
        if (text[i] !== '"') fail(`expected a quoted field name, found ${describeChar(i)}`);
        const keyStart = i;
        const key = readString();
        const memberPath = [...path, key];
        const keyPos = posAt(keyStart);
        if (seen.has(key)) duplicates.push({ path: memberPath, position: keyPos });
        seen.add(key);
        positions.set(formatPath(memberPath), keyPos);
        skipWs();
        if (text[i] !== ":") fail(`expected ":" after field name, found ${describeChar(i)}`);
        i++;
        const v = readValue(memberPath, depth + 1);
        // defineProperty keeps a "__proto__" key as data instead of changing the prototype.
        Object.defineProperty(obj, key, { value: v, enumerable: true, writable: true, configurable: true });
        skipWs();
        if (text[i] === ",") {
          i++;
          continue;
        }
        if (text[i] === "}") {
          i++;
          return obj;
        }
        fail(`expected "," or "}" in object, found ${describeChar(i)}`);
      }
    }
    if (c === "[") {
      i++;
      const arr: unknown[] = [];
      skipWs();
      if (text[i] === "]") {
        i++;
        return arr;
      }
      while (true) {
        skipWs();
        const itemPath = [...path, arr.length];
        positions.set(formatPath(itemPath), posAt(i));
        arr.push(readValue(itemPath, depth + 1));
        skipWs();
        if (text[i] === ",") {
          i++;
          continue;
        }
        if (text[i] === "]") {
          i++;
          return arr;
        }
        fail(`expected "," or "]" in array, found ${describeChar(i)}`);
      }
    }
    if (c === '"') return readString();
    if (c === "t" && text.startsWith("true", i)) {
      i += 4;
      return true;
    }
    if (c === "f" && text.startsWith("false", i)) {
      i += 5;
      return false;
    }
    if (c === "n" && text.startsWith("null", i)) {
      i += 4;
      return null;
    }
    NUMBER_RE.lastIndex = i;
    const m = NUMBER_RE.exec(text);
    if (m && m[0].length > 0 && m[0] !== "-") {
      i += m[0].length;
      return Number(m[0]);
    }
    return fail(`unexpected ${describeChar(i)}, expected a value`);
  };

  if (text.charCodeAt(0) === 0xfeff) i = 1; // tolerate a byte-order mark from Windows editors
  positions.set("", posAt(i));
  const value = readValue([], 0);
  skipWs();
  if (i < text.length) fail(`unexpected ${describeChar(i)} after the end of the JSON value`);
  return { value, positions, duplicates };
}

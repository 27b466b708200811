/**
 * Edits to the scene's JSON text that keep the author's own layout: a form changing one number rewrites
 * only that number, so the editor's cursor, folding and the diff against the saved version stay small.
 * Also maps a validation path (`lights[2].shape.radius`) to the span of text it names, for error markers.
 */
import { applyEdits, findNodeAtLocation, modify, parseTree, type Node as JsonNode, type ParseError } from "jsonc-parser";

export type PathSegment = string | number;

const FORMAT = { insertSpaces: true, tabSize: 2, eol: "\n" } as const;

/** Replace (or insert) the value at `path`; `undefined` removes the member. Throws if the text is not JSON. */
export function setAtPath(text: string, path: readonly PathSegment[], value: unknown): string {
  // One parse both checks the text and finds the member (a form keystroke on a big scene pays for one, not two).
  const errors: ParseError[] = [];
  const root = parseTree(text, errors, { allowTrailingComma: false, disallowComments: true });
  if (errors.length > 0 || !root) throw new Error(NOT_JSON);
  if (value !== undefined) {
    // Replacing an existing value: write it in our compact layout at the member's own indentation.
    const node = findNodeAtLocation(root, [...path]);
    if (node) {
      const lineStart = text.lastIndexOf("\n", node.offset - 1) + 1;
      const indent = /^[ \t]*/.exec(text.slice(lineStart))![0];
      return text.slice(0, node.offset) + prettyJson(value, indent) + text.slice(node.offset + node.length);
    }
  }
  const edits = modify(text, [...path], value, { formattingOptions: FORMAT });
  return applyEdits(text, edits);
}

/** Apply several path edits in order (one undo step for the caller). */
export function setManyAtPaths(text: string, changes: readonly { path: readonly PathSegment[]; value: unknown }[]): string {
  let out = text;
  for (const c of changes) out = setAtPath(out, c.path, c.value);
  return out;
}

const NOT_JSON = "the scene text is not valid JSON; fix it in the editor first";

export function assertParseable(text: string): void {
  const errors: ParseError[] = [];
  parseTree(text, errors, { allowTrailingComma: false, disallowComments: true });
  if (errors.length > 0) throw new Error(NOT_JSON);
}

/** The value at a path of the text, or undefined (also when the text is not JSON). */
export function valueAtPath(text: string, path: readonly PathSegment[]): unknown {
  const errors: ParseError[] = [];
  const root = parseTree(text, errors, { disallowComments: true });
  if (!root || errors.length) return undefined;
  const node = findNodeAtLocation(root, [...path]);
  return node ? nodeValue(node) : undefined;
}

function nodeValue(node: JsonNode): unknown {
  switch (node.type) {
    case "object": {
      const o: Record<string, unknown> = {};
      for (const p of node.children ?? []) {
        const [k, v] = p.children ?? [];
        if (k && v) o[String(k.value)] = nodeValue(v);
      }
      return o;
    }
    case "array":
      return (node.children ?? []).map(nodeValue);
    default:
      return node.value;
  }
}

/**
 * `lights[2].shape.radius` → ["lights", 2, "shape", "radius"]; also reads the quoted form
 * `materials["glass top"]` that formatPath writes for keys outside [A-Za-z0-9_-].
 */
export function parseIssuePath(path: string): PathSegment[] {
  const out: PathSegment[] = [];
  let i = 0;
  while (i < path.length) {
    const c = path[i];
    if (c === ".") {
      i++;
      continue;
    }
    if (c === "[") {
      const close = findClose(path, i);
      const inner = path.slice(i + 1, close);
      if (/^\d+$/.test(inner)) out.push(Number(inner));
      else {
        try {
          out.push(JSON.parse(inner) as string);
        } catch {
          out.push(inner);
        }
      }
      i = close + 1;
      continue;
    }
    let j = i;
    while (j < path.length && path[j] !== "." && path[j] !== "[") j++;
    out.push(path.slice(i, j));
    i = j;
  }
  return out;
}

function findClose(path: string, open: number): number {
  let inString = false;
  for (let k = open + 1; k < path.length; k++) {
    const ch = path[k];
    if (inString) {
      if (ch === "\\") k++;
      else if (ch === '"') inString = false;
    } else if (ch === '"') inString = true;
    else if (ch === "]") return k;
  }
  return path.length;
}

export type TextRange = { offset: number; length: number };

/**
 * The text an issue path points at: the member (key and value) when it exists, else the deepest existing
 * ancestor's key (a missing field is reported on the object that lacks it). Null if the text is not JSON.
 */
export function rangeOfPath(text: string, path: readonly PathSegment[]): TextRange | null {
  const errors: ParseError[] = [];
  const root = parseTree(text, errors, { disallowComments: true });
  if (!root) return null;
  for (let n = path.length; n >= 0; n--) {
    const node = findNodeAtLocation(root, [...path.slice(0, n)]);
    if (!node) continue;
    if (n === path.length) {
      const member = node.parent?.type === "property" ? node.parent : node;
      return { offset: member.offset, length: member.length };
    }
    // An ancestor: point at its key (or its first character) rather than underlining the whole block.
    const key = node.parent?.type === "property" ? node.parent.children?.[0] : undefined;
    if (key) return { offset: key.offset, length: key.length };
    return { offset: node.offset, length: 1 };
  }
  return null;
}

/** 1-based line/column of an offset, as the editor counts them. */
export function positionOfOffset(text: string, offset: number): { line: number; column: number } {
  let line = 1;
  let lineStart = 0;
  for (let i = 0; i < offset && i < text.length; i++) {
    if (text.charCodeAt(i) === 10) {
      line++;
      lineStart = i + 1;
    }
  }
  return { line, column: offset - lineStart + 1 };
}

/** The validator's path syntax for a path: ["lights", 2, "shape"] → `lights[2].shape`. */
export function formatIssuePath(path: readonly PathSegment[]): string {
  let out = "";
  for (const seg of path) {
    if (typeof seg === "number") out += `[${seg}]`;
    else if (/^[A-Za-z0-9_-]+$/.test(seg)) out += out === "" ? seg : `.${seg}`;
    else out += `[${JSON.stringify(seg)}]`;
  }
  return out;
}

/** Read a value from already-parsed JSON by path. */
export function getIn(value: unknown, path: readonly PathSegment[]): unknown {
  let cur: unknown = value;
  for (const seg of path) {
    if (cur === null || typeof cur !== "object") return undefined;
    cur = (cur as Record<string | number, unknown>)[seg];
  }
  return cur;
}

/** 2-space JSON, with arrays of plain values (vectors, colours) kept on one line; `pad` is the current indentation. */
export function prettyJson(v: unknown, pad = ""): string {
  if (Array.isArray(v)) {
    if (v.length === 0) return "[]";
    if (v.every((x) => x === null || typeof x !== "object")) return `[${v.map((x) => JSON.stringify(x)).join(", ")}]`;
    const inner = pad + "  ";
    return `[\n${v.map((x) => inner + prettyJson(x, inner)).join(",\n")}\n${pad}]`;
  }
  if (v !== null && typeof v === "object") {
    const entries = Object.entries(v as Record<string, unknown>).filter(([, x]) => x !== undefined);
    if (entries.length === 0) return "{}";
    const inner = pad + "  ";
    return `{\n${entries.map(([k, x]) => `${inner}${JSON.stringify(k)}: ${prettyJson(x, inner)}`).join(",\n")}\n${pad}}`;
  }
  return JSON.stringify(v);
}

/**
 * `next` with every part that equals the same part of `prev` replaced by `prev`'s own object, so a reader
 * holding a slice (one light, the camera) sees the same reference when that slice did not change. Objects
 * count as equal only with the same keys in the same order (the forms list materials in text order).
 */
export function keepUnchanged(prev: unknown, next: unknown): unknown {
  if (prev === next || prev === null || next === null || typeof prev !== "object" || typeof next !== "object") return next;
  if (Array.isArray(prev) !== Array.isArray(next)) return next;
  if (Array.isArray(next)) {
    const before = prev as unknown[];
    let same = before.length === next.length;
    for (let i = 0; i < next.length; i++) {
      const kept = keepUnchanged(before[i], next[i]);
      if (kept !== before[i]) same = false;
      next[i] = kept;
    }
    return same ? prev : next;
  }
  const before = prev as Record<string, unknown>;
  const after = next as Record<string, unknown>;
  const keysBefore = Object.keys(before);
  const keysAfter = Object.keys(after);
  let same = keysBefore.length === keysAfter.length;
  for (let i = 0; i < keysAfter.length; i++) {
    const k = keysAfter[i]!;
    if (same && keysBefore[i] !== k) same = false;
    const kept = Object.hasOwn(before, k) ? keepUnchanged(before[k], after[k]) : after[k];
    if (kept !== before[k]) same = false;
    // A "__proto__" member is an own property after JSON.parse; assigning it would set the prototype instead.
    if (kept !== after[k] && k !== "__proto__") after[k] = kept;
  }
  return same ? prev : next;
}

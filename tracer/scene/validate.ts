/**
 * validateScene: the one gate every scene passes (editor, API, database, command line). It turns zod's
 * issues into messages that name the JSON path (`lights[2].shape.radius: must be > 0`), adds line and
 * column when the scene arrived as text, and checks what a per-field schema cannot: references between
 * collections, unique ids, light group names.
 */
import { z } from "zod";
import { LIMITS } from "./limits";
import { SceneSchema, type Scene } from "./schema";
import { formatPath, JsonTextError, parseJsonWithPositions, type PathSegment, type TextPosition } from "./json-text";

export type SceneIssue = { path: string; message: string; line?: number; column?: number };
export type SceneResult = { ok: true; scene: Scene } | { ok: false; issues: SceneIssue[] };

export { formatPath };

export function formatIssue(issue: SceneIssue): string {
  const where = issue.line !== undefined ? ` (line ${issue.line}, column ${issue.column ?? 1})` : "";
  return issue.path === "" ? `${issue.message}${where}` : `${issue.path}: ${issue.message}${where}`;
}

export function formatIssues(issues: readonly SceneIssue[]): string {
  return issues.map(formatIssue).join("\n");
}

function describeValue(v: unknown): string {
  if (v === null) return "null";
  if (Array.isArray(v)) return "an array";
  if (typeof v === "number") return Number.isFinite(v) ? `the number ${v}` : String(v);
  if (typeof v === "string") return `the string ${JSON.stringify(v.length > 40 ? v.slice(0, 40) + "…" : v)}`;
  if (typeof v === "object") return "an object";
  return typeof v;
}

const EXPECTED_WORDS: Record<string, string> = {
  number: "a number",
  string: "a string",
  boolean: "true or false",
  object: "an object",
  array: "an array",
  tuple: "an array",
  record: "an object",
  int: "an integer",
};

function listValues(values: readonly unknown[]): string {
  return values.map((v) => JSON.stringify(v)).join(", ");
}

/** Messages in the product's words; schema-level messages (regex, refinements) take precedence over this. */
const sceneErrorMap: z.core.$ZodErrorMap = (iss) => {
  switch (iss.code) {
    case "invalid_type": {
      if (iss.input === undefined) return "is required";
      if (iss.expected === "int") return `must be an integer, got ${describeValue(iss.input)}`;
      if (iss.expected === "number" && typeof iss.input === "number") return "must be a finite number";
      return `must be ${EXPECTED_WORDS[iss.expected] ?? iss.expected}, got ${describeValue(iss.input)}`;
    }
    case "too_small": {
      const min = Number(iss.minimum);
      if (iss.origin === "number") return iss.inclusive ? `must be at least ${min}` : `must be > ${min}`;
      if (iss.origin === "string") return min <= 1 ? "must not be empty" : `must be at least ${min} characters`;
      if (iss.origin === "array") return iss.exact ? `must have exactly ${min} items` : `must have at least ${min} items`;
      return `must be at least ${min}`;
    }
    case "too_big": {
      const max = Number(iss.maximum);
      if (iss.origin === "number") return iss.inclusive ? `must be at most ${max}` : `must be < ${max}`;
      if (iss.origin === "string") return `must be at most ${max} characters`;
      if (iss.origin === "array") return iss.exact ? `must have exactly ${max} items` : `must have at most ${max} items`;
      return `must be at most ${max}`;
    }
    case "invalid_value":
      return iss.values.length === 1
        ? `must be ${JSON.stringify(iss.values[0])}`
        : `must be one of ${listValues(iss.values)}`;
    case "invalid_union":
      return "does not match any allowed form";
    case "invalid_format":
      return "has an invalid format";
    default:
      return undefined;
  }
};

// --- walking the schema, to suggest the field a typo meant -------------------------------------

type AnySchema = z.core.$ZodType;

function unwrap(schema: AnySchema): AnySchema {
  let s = schema;
  while (s instanceof z.ZodDefault || s instanceof z.ZodOptional) s = s.unwrap() as AnySchema;
  return s;
}

/** For a discriminated union, the option that the input's tag selects (null if none). */
function resolveOption(schema: AnySchema, input: unknown): AnySchema | null {
  const s = unwrap(schema);
  if (!(s instanceof z.ZodDiscriminatedUnion)) return s;
  const disc = s.def.discriminator;
  const tag = input && typeof input === "object" ? (input as Record<string, unknown>)[disc] : undefined;
  const match = s.options.find((o) => {
    if (!(o instanceof z.ZodObject)) return false;
    const lit = (o.shape as Record<string, AnySchema>)[disc];
    return lit instanceof z.ZodLiteral && (lit.values as Set<unknown>).has(tag);
  });
  return (match as AnySchema | undefined) ?? null;
}

function childSchema(schema: AnySchema, seg: PathSegment, input: unknown): { schema: AnySchema; input: unknown } | null {
  const s = resolveOption(schema, input);
  if (!s) return null;
  const next = input && typeof input === "object" ? (input as Record<string | number, unknown>)[seg] : undefined;
  if (s instanceof z.ZodObject && typeof seg === "string") {
    const child = (s.shape as Record<string, AnySchema>)[seg];
    return child ? { schema: child, input: next } : null;
  }
  if (s instanceof z.ZodArray && typeof seg === "number") return { schema: s.element as AnySchema, input: next };
  if (s instanceof z.ZodRecord && typeof seg === "string") return { schema: s.valueType as AnySchema, input: next };
  return null;
}

function knownKeysAt(path: readonly PathSegment[], input: unknown): string[] {
  let cur: { schema: AnySchema; input: unknown } | null = { schema: SceneSchema, input };
  for (const seg of path) {
    cur = cur && childSchema(cur.schema, seg, cur.input);
    if (!cur) return [];
  }
  const s = resolveOption(cur.schema, cur.input);
  return s instanceof z.ZodObject ? Object.keys(s.shape as Record<string, unknown>) : [];
}

function editDistance(a: string, b: string): number {
  const dp = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    let prev = dp[0]!;
    dp[0] = i;
    for (let j = 1; j <= b.length; j++) {
      const tmp = dp[j]!;
      dp[j] = Math.min(dp[j]! + 1, dp[j - 1]! + 1, prev + (a[i - 1]!.toLowerCase() === b[j - 1]!.toLowerCase() ? 0 : 1));
      prev = tmp;
    }
  }
  return dp[b.length]!;
}

function suggestKey(key: string, known: readonly string[]): string | null {
  let best: string | null = null;
  let bestD = Infinity;
  for (const k of known) {
    const d = editDistance(key, k);
    if (d < bestD) {
      bestD = d;
      best = k;
    }
  }
  return best !== null && bestD <= Math.max(1, Math.floor(key.length / 3)) ? best : null;
}

// --- converting issues ---------------------------------------------------------------------------

function toPathSegments(path: readonly PropertyKey[]): PathSegment[] {
  return path.map((p) => (typeof p === "number" ? p : String(p)));
}

function convertZodIssues(issues: readonly z.core.$ZodIssue[], input: unknown): { path: PathSegment[]; message: string }[] {
  const out: { path: PathSegment[]; message: string }[] = [];
  for (const iss of issues) {
    const path = toPathSegments(iss.path);
    if (iss.code === "unrecognized_keys") {
      const known = knownKeysAt(path, input);
      for (const key of iss.keys) {
        const hint = suggestKey(key, known);
        out.push({ path: [...path, key], message: hint ? `unknown field (did you mean "${hint}"?)` : "unknown field" });
      }
    } else if (iss.code === "invalid_union" && iss.discriminator !== undefined && "options" in iss && iss.options) {
      const options = iss.options;
      const parent = path.slice(0, -1);
      let got: unknown = input;
      for (const seg of path) got = got && typeof got === "object" ? (got as Record<string | number, unknown>)[seg] : undefined;
      const base = got === undefined ? "is required" : `${describeValue(got)} is not allowed`;
      out.push({ path: path.length ? path : [...parent, "type"], message: `${base}; must be one of ${listValues(options)}` });
    } else if (iss.code === "invalid_key") {
      const key = path[path.length - 1];
      const inner = iss.issues[0]?.message ?? "is not a valid id";
      out.push({ path, message: `id ${JSON.stringify(key)} ${inner}` });
    } else {
      out.push({ path, message: iss.message });
    }
  }
  return out;
}

/** Checks that need the whole scene: references, uniqueness, group names. The scene is already shape-valid. */
export function crossCheckScene(scene: Scene): { path: PathSegment[]; message: string }[] {
  const out: { path: PathSegment[]; message: string }[] = [];
  const materialIds = Object.keys(scene.materials);

  const objectIds = new Map<string, number>();
  scene.objects.forEach((o, i) => {
    const first = objectIds.get(o.id);
    if (first !== undefined) out.push({ path: ["objects", i, "id"], message: `duplicate id "${o.id}" (also objects[${first}])` });
    else objectIds.set(o.id, i);
    if (!Object.prototype.hasOwnProperty.call(scene.materials, o.material)) {
      const hint = suggestKey(o.material, materialIds);
      const known = materialIds.length ? `; materials defines ${listValues(materialIds.slice(0, 10))}${materialIds.length > 10 ? ", …" : ""}` : "; materials is empty";
      out.push({
        path: ["objects", i, "material"],
        message: `unknown material "${o.material}"${hint ? ` (did you mean "${hint}"?)` : known}`,
      });
    }
  });

  const lightIds = new Map<string, number>();
  const groups = new Set<string>();
  scene.lights.forEach((l, i) => {
    const first = lightIds.get(l.id);
    if (first !== undefined) out.push({ path: ["lights", i, "id"], message: `duplicate id "${l.id}" (also lights[${first}])` });
    else lightIds.set(l.id, i);
    if (l.group === "environment") {
      out.push({ path: ["lights", i, "group"], message: '"environment" is reserved for the environment\'s light' });
    }
    groups.add(l.group);
  });
  const groupCount = groups.size + (scene.environment ? 1 : 0);
  if (groupCount > LIMITS.maxLightGroups) {
    out.push({ path: ["lights"], message: `uses ${groupCount} light groups (including the environment); at most ${LIMITS.maxLightGroups} are allowed` });
  }
  return out;
}

function attachPositions(
  issues: { path: PathSegment[]; message: string }[],
  positions: Map<string, TextPosition> | null,
): SceneIssue[] {
  return issues.map(({ path, message }) => {
    const issue: SceneIssue = { path: formatPath(path), message };
    if (positions) {
      // The deepest part of the path that exists in the text (a missing field points at its parent).
      for (let n = path.length; n >= 0; n--) {
        const pos = positions.get(formatPath(path.slice(0, n)));
        if (pos) {
          issue.line = pos.line;
          issue.column = pos.column;
          break;
        }
      }
    }
    return issue;
  });
}

/**
 * Validate a scene given as JSON text or as an already-parsed value. Returns the scene with every
 * default filled in, or every problem found (not just the first), each naming its JSON path.
 */
export function validateScene(input: unknown): SceneResult {
  let value: unknown = input;
  let positions: Map<string, TextPosition> | null = null;
  const early: { path: PathSegment[]; message: string }[] = [];

  if (typeof input === "string") {
    try {
      const parsed = parseJsonWithPositions(input);
      value = parsed.value;
      positions = parsed.positions;
      for (const d of parsed.duplicates) early.push({ path: d.path, message: "duplicate field (it appears more than once in this object)" });
    } catch (e) {
      if (e instanceof JsonTextError) {
        return { ok: false, issues: [{ path: "", message: `invalid JSON: ${e.message.replace(/^line \d+, column \d+: /, "")}`, line: e.line, column: e.column }] };
      }
      throw e;
    }
  }

  const result = SceneSchema.safeParse(value, { error: sceneErrorMap });
  if (!result.success) {
    return { ok: false, issues: attachPositions([...early, ...convertZodIssues(result.error.issues, value)], positions) };
  }
  const cross = crossCheckScene(result.data);
  if (early.length || cross.length) return { ok: false, issues: attachPositions([...early, ...cross], positions) };
  return { ok: true, scene: result.data };
}

/** Like validateScene but throws one Error listing every issue; for scripts and tests. */
export function parseSceneOrThrow(input: unknown): Scene {
  const r = validateScene(input);
  if (!r.ok) throw new Error(formatIssues(r.issues));
  return r.scene;
}

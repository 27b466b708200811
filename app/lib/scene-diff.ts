// A structural diff of two scenes, told in the scene's own terms: which light, material or object changed
// and each field from → to. jsondiffpatch finds what changed (objects and lights are matched by id, so a
// reorder is a move, not a delete plus an add); this module names it. Pure: shared by the compare page,
// the workspace's save-conflict view and the API.
import { create, type Delta } from "jsondiffpatch";
import { validateScene } from "@tracer/scene/validate";

export type ChangeOp = "added" | "removed" | "changed" | "moved";

export type EntityKind = "scene" | "image" | "camera" | "render" | "display" | "environment" | "material" | "object" | "light";

export type FieldChange = {
  /** Path inside the entity, like "shape.radius" ("" when the entity itself was added or removed). */
  field: string;
  op: ChangeOp;
  from?: unknown;
  to?: unknown;
  /** "roughness 0.2 → 0.35". */
  text: string;
};

export type EntityChange = {
  kind: EntityKind;
  /** Material, object or light id; absent for the singletons (camera, render, …). */
  id?: string;
  /** 'light "key"', "camera". */
  label: string;
  op: ChangeOp;
  fields: FieldChange[];
  /** One line per field change: 'light "key": radiance [5, 5, 5] → [8, 8, 8]'. */
  lines: string[];
};

export type SceneDiff = {
  identical: boolean;
  /** True when both sides passed validation and were compared with their defaults filled in. */
  normalized: boolean;
  changes: EntityChange[];
  delta: Delta;
  summary: string;
};

const differ = create({
  // Scene objects and lights are identified by id; anything else in an array is matched by position.
  objectHash: (item: object, index?: number) => {
    const id = (item as { id?: unknown }).id;
    return typeof id === "string" ? `id:${id}` : `#${index ?? 0}`;
  },
  arrays: { detectMove: true, includeValueOnMove: false },
  propertyFilter: () => true,
  cloneDiffValues: true,
});

// ---------------------------------------------------------------------------------------------
// formatting values

export function formatNumber(n: number): string {
  if (!Number.isFinite(n)) return String(n);
  if (Number.isInteger(n)) return String(n);
  const p = Number(n.toPrecision(6));
  return String(p);
}

export function formatValue(v: unknown, depth = 0): string {
  if (v === undefined) return "(unset)";
  if (v === null) return "null";
  if (typeof v === "number") return formatNumber(v);
  if (typeof v === "string") return JSON.stringify(v.length > 60 ? `${v.slice(0, 57)}…` : v);
  if (typeof v === "boolean") return String(v);
  if (Array.isArray(v)) {
    if (depth > 1) return `[${v.length} items]`;
    return `[${v.map((x) => formatValue(x, depth + 1)).join(", ")}]`;
  }
  if (typeof v === "object") {
    if (depth > 1) return "{…}";
    const entries = Object.entries(v as Record<string, unknown>);
    return `{ ${entries.map(([k, x]) => `${k}: ${formatValue(x, depth + 1)}`).join(", ")} }`;
  }
  return String(v);
}

/** Vectors and colours (never empty; an empty list is a collection with nothing in it). */
function isNumberArray(v: unknown): v is number[] {
  return Array.isArray(v) && v.length > 0 && v.every((x) => typeof x === "number");
}

/** Values that read as one quantity: numbers, strings, vectors and colours. */
function isAtomic(v: unknown): boolean {
  return v === null || typeof v !== "object" || isNumberArray(v);
}

/** A short description of a whole entity for "added"/"removed" lines. */
function describeEntity(kind: EntityKind, v: unknown): string {
  if (!v || typeof v !== "object") return formatValue(v);
  const o = v as Record<string, unknown>;
  const shape = o.shape as Record<string, unknown> | undefined;
  switch (kind) {
    case "object": {
      const parts = [String(shape?.type ?? "shape")];
      if (shape?.type === "mesh") parts.push(`asset ${formatValue(shape.asset)}`);
      parts.push(`material ${formatValue(o.material)}`);
      return parts.join(", ");
    }
    case "light": {
      const parts = [o.type === "area" ? `area ${String(shape?.type ?? "")}`.trim() : String(o.type)];
      if (o.radiance !== undefined) parts.push(`radiance ${formatValue(o.radiance)}`);
      if (o.power !== undefined) parts.push(`power ${formatValue(o.power)}`);
      if (o.intensity !== undefined) parts.push(`intensity ${formatValue(o.intensity)}`);
      if (o.group !== undefined && o.group !== "default") parts.push(`group ${formatValue(o.group)}`);
      return parts.join(", ");
    }
    case "material": {
      const rest = Object.entries(o)
        .filter(([k]) => k !== "type")
        .map(([k, x]) => `${k} ${formatValue(x, 1)}`);
      return [String(o.type), ...rest].join(", ");
    }
    case "environment": {
      const rest = Object.entries(o)
        .filter(([k]) => k !== "type")
        .map(([k, x]) => `${k} ${formatValue(x, 1)}`);
      return [String(o.type), ...rest].join(", ");
    }
    default:
      return formatValue(v);
  }
}

// ---------------------------------------------------------------------------------------------
// walking the delta

type Collector = (field: string[], op: ChangeOp, from: unknown, to: unknown) => void;

function get(v: unknown, key: string | number): unknown {
  if (v === null || typeof v !== "object") return undefined;
  return (v as Record<string | number, unknown>)[key];
}

function isArrayDelta(d: unknown): d is Record<string, unknown> & { _t: "a" } {
  return !!d && typeof d === "object" && !Array.isArray(d) && (d as { _t?: unknown })._t === "a";
}

/** Walk a delta between `left` and `right`, reporting leaf changes with the real before/after values. */
function walk(delta: unknown, path: string[], left: unknown, right: unknown, emit: Collector): void {
  if (delta === undefined) return;
  if (Array.isArray(delta)) {
    if (delta.length === 1) emit(path, "added", undefined, delta[0]);
    else if (delta.length === 2 && !isAtomic(delta[0]) && !isAtomic(delta[1])) expandReplaced(path, delta[0], delta[1], emit);
    else if (delta.length === 2) emit(path, "changed", delta[0], delta[1]);
    else if (delta.length === 3 && delta[2] === 0) emit(path, "removed", delta[0], undefined);
    else emit(path, "changed", left, right); // text diff or anything else: report whole values
    return;
  }
  if (isAtomic(left) && isAtomic(right)) {
    emit(path, "changed", left, right);
    return;
  }
  if (isArrayDelta(delta)) {
    if (isNumberArray(left) || isNumberArray(right) || !Array.isArray(left) || !Array.isArray(right)) {
      emit(path, "changed", left, right);
      return;
    }
    walkArray(delta, path, left, right, emit);
    return;
  }
  for (const [key, sub] of Object.entries(delta as Record<string, unknown>)) {
    walk(sub, [...path, key], get(left, key), get(right, key), emit);
  }
}

/**
 * A collection replaced wholesale (e.g. every light removed, or an empty list filled) still reads per
 * member: list items by id (else position), object members by key.
 */
function expandReplaced(path: string[], before: unknown, after: unknown, emit: Collector): void {
  if (Array.isArray(before) && Array.isArray(after)) {
    const key = (x: unknown, i: number) => idOf(x, i);
    const beforeKeys = new Map(before.map((x, i) => [key(x, i), x]));
    const afterKeys = new Map(after.map((x, i) => [key(x, i), x]));
    for (const [k, x] of beforeKeys) {
      if (!afterKeys.has(k)) emit([...path, k], "removed", x, undefined);
      else walk(differ.diff(x, afterKeys.get(k)), [...path, k], x, afterKeys.get(k), emit);
    }
    for (const [k, x] of afterKeys) if (!beforeKeys.has(k)) emit([...path, k], "added", undefined, x);
    return;
  }
  if (before && after && typeof before === "object" && typeof after === "object" && !Array.isArray(before) && !Array.isArray(after)) {
    const b = before as Record<string, unknown>;
    const a = after as Record<string, unknown>;
    for (const k of new Set([...Object.keys(b), ...Object.keys(a)])) {
      if (!(k in a)) emit([...path, k], "removed", b[k], undefined);
      else if (!(k in b)) emit([...path, k], "added", undefined, a[k]);
      else walk(differ.diff(b[k], a[k]), [...path, k], b[k], a[k], emit);
    }
    return;
  }
  emit(path, "changed", before, after);
}

function idOf(item: unknown, fallback: number): string {
  const id = get(item, "id");
  return typeof id === "string" ? id : `#${fallback + 1}`;
}

function walkArray(delta: Record<string, unknown>, path: string[], left: unknown[], right: unknown[], emit: Collector): void {
  for (const [key, sub] of Object.entries(delta)) {
    if (key === "_t") continue;
    if (key.startsWith("_")) {
      const oldIndex = Number(key.slice(1));
      const d = sub as unknown[];
      const item = left[oldIndex];
      if (d.length === 3 && d[2] === 3) {
        emit([...path, idOf(item, oldIndex)], "moved", oldIndex, d[1]);
      } else {
        emit([...path, idOf(item, oldIndex)], "removed", item, undefined);
      }
      continue;
    }
    const newIndex = Number(key);
    const item = right[newIndex];
    if (Array.isArray(sub) && sub.length === 1) {
      emit([...path, idOf(item, newIndex)], "added", undefined, item);
      continue;
    }
    const id = get(item, "id");
    const before = typeof id === "string" ? left.find((x) => get(x, "id") === id) : left[newIndex];
    walk(sub, [...path, idOf(item, newIndex)], before, item, emit);
  }
}

// ---------------------------------------------------------------------------------------------
// grouping into entities

const SECTION_ORDER: EntityKind[] = ["scene", "image", "camera", "render", "display", "environment", "material", "object", "light"];

function entityOf(path: string[]): { kind: EntityKind; id?: string; label: string; rest: string[] } {
  const [head, second, ...tail] = path;
  switch (head) {
    case "materials":
      return second === undefined ? { kind: "material", label: "materials", rest: [] } : { kind: "material", id: second, label: `material "${second}"`, rest: tail };
    case "objects":
      return second === undefined ? { kind: "object", label: "objects", rest: [] } : { kind: "object", id: second, label: `object "${second}"`, rest: tail };
    case "lights":
      return second === undefined ? { kind: "light", label: "lights", rest: [] } : { kind: "light", id: second, label: `light "${second}"`, rest: tail };
    case "image":
    case "camera":
    case "render":
    case "display":
    case "environment":
      return { kind: head, label: head, rest: path.slice(1) };
    default:
      return { kind: "scene", label: "scene", rest: path };
  }
}

function fieldText(field: string, op: ChangeOp, from: unknown, to: unknown, kind: EntityKind): string {
  const name = field || "";
  switch (op) {
    case "added":
      return name ? `${name} set to ${formatValue(to)}` : `added: ${describeEntity(kind, to)}`;
    case "removed":
      return name ? `${name} removed (was ${formatValue(from)})` : `removed (was ${describeEntity(kind, from)})`;
    case "moved":
      return `moved from position ${Number(from) + 1} to ${Number(to) + 1}`;
    case "changed":
      if (!name && kind === "environment") return `${describeEntity(kind, from)} → ${describeEntity(kind, to)}`;
      return `${name || "value"} ${formatValue(from)} → ${formatValue(to)}`;
  }
}

function asJson(v: unknown): unknown {
  if (typeof v === "string") {
    try {
      return JSON.parse(v) as unknown;
    } catch {
      return v;
    }
  }
  return v;
}

/**
 * Diff two scenes. When both are valid they are compared with every default filled in, so writing out a
 * default (roughness 0) is not a change but changing one is; otherwise the JSON is compared as written.
 */
export function diffScenes(before: unknown, after: unknown, options: { normalize?: boolean } = {}): SceneDiff {
  let left = asJson(before);
  let right = asJson(after);
  let normalized = false;
  if (options.normalize !== false) {
    const a = validateScene(left);
    const b = validateScene(right);
    if (a.ok && b.ok) {
      left = JSON.parse(JSON.stringify(a.scene)) as unknown;
      right = JSON.parse(JSON.stringify(b.scene)) as unknown;
      normalized = true;
    }
  }
  const delta = differ.diff(left, right);

  const byEntity = new Map<string, EntityChange>();
  walk(delta, [], left, right, (path, op, from, to) => {
    const ent = entityOf(path);
    const key = `${ent.kind}:${ent.id ?? ""}`;
    let change = byEntity.get(key);
    if (!change) {
      change = { kind: ent.kind, id: ent.id, label: ent.label, op: "changed", fields: [], lines: [] };
      byEntity.set(key, change);
    }
    const field = ent.rest.join(".");
    // A whole entity (or the environment) appearing or disappearing is the entity's own op.
    if (field === "" && (op === "added" || op === "removed" || op === "moved")) change.op = op;
    const text = fieldText(field, op, from, to, ent.kind);
    change.fields.push({ field, op, from, to, text });
    change.lines.push(`${ent.label}: ${text}`);
  });

  const changes = [...byEntity.values()].sort((a, b) => {
    const s = SECTION_ORDER.indexOf(a.kind) - SECTION_ORDER.indexOf(b.kind);
    return s !== 0 ? s : (a.id ?? "").localeCompare(b.id ?? "");
  });
  for (const c of changes) c.fields.sort((a, b) => a.field.localeCompare(b.field));
  for (const c of changes) c.lines = c.fields.map((f) => `${c.label}: ${f.text}`);

  return { identical: delta === undefined, normalized, changes, delta, summary: summarize(changes) };
}

function plural(n: number, word: string): string {
  return `${n} ${word}${n === 1 ? "" : "s"}`;
}

function summarize(changes: EntityChange[]): string {
  if (changes.length === 0) return "No differences";
  const count = (k: EntityKind, op?: ChangeOp) => changes.filter((c) => c.kind === k && (!op || c.op === op)).length;
  const parts: string[] = [];
  for (const [kind, word] of [
    ["light", "light"],
    ["material", "material"],
    ["object", "object"],
  ] as const) {
    const added = count(kind, "added");
    const removed = count(kind, "removed");
    const changed = count(kind) - added - removed;
    if (changed) parts.push(`${plural(changed, word)} changed`);
    if (added) parts.push(`${plural(added, word)} added`);
    if (removed) parts.push(`${plural(removed, word)} removed`);
  }
  const singles = changes.filter((c) => !["light", "material", "object"].includes(c.kind)).map((c) => c.label);
  if (singles.length) parts.push(`${singles.join(", ")} changed`);
  return parts.join("; ");
}

/** Every change as one line, in section order. */
export function sceneDiffLines(diff: SceneDiff): string[] {
  return diff.changes.flatMap((c) => c.lines);
}

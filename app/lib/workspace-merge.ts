/**
 * Combining edits after a refused save: their version plus my changes (each taken against the version my
 * edit started from). Lights and objects are matched by id, so their reordering and my value edits combine;
 * where both changed the same field, mine wins and the conflict view lists it first.
 */
import { create } from "jsondiffpatch";

const differ = create({
  objectHash: (item: object, index?: number) => {
    const id = (item as { id?: unknown }).id;
    return typeof id === "string" ? `id:${id}` : `#${index ?? 0}`;
  },
  arrays: { detectMove: true, includeValueOnMove: false },
  cloneDiffValues: true,
});

type Json = Record<string, unknown>;
const LISTS = ["objects", "lights"] as const;

/** Lists of id'd items become maps by id, so a change to light "key" applies to "key" wherever it sits. */
function keyed(scene: unknown): Json {
  const s = { ...(scene as Json) };
  for (const k of LISTS) {
    const list = s[k];
    if (!Array.isArray(list) || !list.every((x) => x && typeof x === "object" && typeof (x as Json).id === "string")) continue;
    s[k] = Object.fromEntries(list.map((x) => [(x as Json).id as string, x]));
  }
  return s;
}

function unkeyed(merged: Json, theirs: Json, mine: Json): Json {
  const out = { ...merged };
  for (const k of LISTS) {
    const map = merged[k];
    if (!map || typeof map !== "object" || Array.isArray(map)) continue;
    const byId = map as Record<string, unknown>;
    const ids = (v: unknown) => (Array.isArray(v) ? v.map((x) => (x as Json).id as string) : []);
    const order = [...ids(theirs[k]).filter((id) => id in byId), ...ids(mine[k]).filter((id) => id in byId && !ids(theirs[k]).includes(id))];
    for (const id of Object.keys(byId)) if (!order.includes(id)) order.push(id);
    out[k] = order.map((id) => byId[id]);
  }
  return out;
}

/** theirs + (mine − base), or null when my changes cannot be applied to their version. */
export function combineEdits(baseText: string, mineText: string, theirsText: string): unknown | null {
  try {
    const base = JSON.parse(baseText) as Json;
    const mine = JSON.parse(mineText) as Json;
    const theirs = JSON.parse(theirsText) as Json;
    const delta = differ.diff(keyed(base), keyed(mine));
    if (delta === undefined) return theirs;
    const merged = differ.patch(structuredClone(keyed(theirs)), delta) as Json;
    return unkeyed(merged, theirs, mine);
  } catch {
    return null;
  }
}

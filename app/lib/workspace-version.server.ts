/**
 * The workspace page's server-side checks: the check of the version it sends (so the page starts with
 * its issues and last good scene without waiting for its check worker), and the account of a refused
 * save (their change and mine, each against the version the edit started from).
 */
import { diffScenes, sceneDiffLines } from "~/lib/scene-diff";
import { validateScene, type SceneResult } from "@tracer/scene/validate";

export function checkVersionText(text: string): SceneResult {
  return validateScene(text);
}

export type ConflictAccount = { theirs: string[]; mine: string[]; overlap: string[] };

export function conflictAccount(parentScene: unknown, headScene: unknown, mine: unknown): ConflictAccount {
  const theirs = diffScenes(parentScene, headScene);
  const ours = diffScenes(parentScene, mine);
  return { theirs: sceneDiffLines(theirs), mine: sceneDiffLines(ours), overlap: overlapOf(theirs, ours) };
}

/** Fields both sides changed (the ones to look at first). */
function overlapOf(a: ReturnType<typeof diffScenes>, b: ReturnType<typeof diffScenes>): string[] {
  const key = (label: string, field: string) => `${label}: ${field}`;
  const left = new Set(a.changes.flatMap((c) => c.fields.map((f) => key(c.label, f.field))));
  return [...new Set(b.changes.flatMap((c) => c.fields.map((f) => key(c.label, f.field))).filter((k) => left.has(k)))];
}

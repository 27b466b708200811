/**
 * What one fuzz case must satisfy: validateScene never throws; a rejection lists at least one issue and
 * every issue names where (a non-empty JSON path, or a line and column in the text); an accepted scene
 * either compiles or fails with a CompileError naming its scene path; a compiled scene renders a tiny
 * image (the scene's own settings, image shrunk to at most 6×4, one pass) to finite, non-negative sums.
 */
import {
  addUnit,
  CompileError,
  compileScene,
  createAccumulation,
  formatIssue,
  renderUnit,
  resolveBeauty,
  validateScene,
  type Scene,
  type SceneIssue,
} from "../../../../tracer/index";
import type { FuzzCase } from "./scene-mutator";

export type Outcome =
  | { kind: "rejected"; issues: number }
  | { kind: "compile-error"; path: string }
  | { kind: "rendered"; pixels: number }
  | { kind: "failure"; stage: "validate" | "compile" | "render"; message: string };

function errorText(e: unknown): string {
  if (e instanceof Error) return `${e.name}: ${e.message.slice(0, 300)}`;
  return String(e).slice(0, 300);
}

function lineCount(text: string): number {
  let n = 1;
  for (let i = 0; i < text.length; i++) if (text.charCodeAt(i) === 10) n++;
  return n;
}

/** Tiny image, one pass: the render part of a case stays a few hundred samples whatever the scene asks. */
export function shrinkForFuzz(scene: Scene): Scene {
  return {
    ...scene,
    image: { width: Math.min(scene.image.width, 6), height: Math.min(scene.image.height, 4) },
    render: { ...scene.render, spp: 1 },
  };
}

/**
 * The oracle for a rejection: null when every issue is usable, else what is wrong. An issue is usable
 * when it has a message and names where: a non-empty path, or a line and column inside the given text.
 * The one exception is a parsed value that is not an object at all: then the whole scene is the place,
 * and the empty path is the only honest one.
 */
export function issueProblem(issues: readonly SceneIssue[], text: string | null, value?: unknown): string | null {
  const rootNotObject = text === null && (value === null || typeof value !== "object" || Array.isArray(value));
  if (issues.length === 0) return "rejected with no issues";
  const lines = text === null ? 0 : lineCount(text);
  for (const issue of issues) {
    if (typeof issue.message !== "string" || issue.message.trim() === "") return `issue at "${issue.path}" has an empty message`;
    const hasPath = typeof issue.path === "string" && issue.path !== "";
    const hasPosition = Number.isInteger(issue.line) && Number.isInteger(issue.column);
    if (!hasPath && !hasPosition && !rootNotObject) return `issue names neither a path nor a line/column: ${formatIssue(issue)}`;
    if (hasPosition && (issue.line! < 1 || issue.line! > lines || issue.column! < 1)) {
      return `issue points outside the text (line ${issue.line} of ${lines}, column ${issue.column})`;
    }
    if (hasPath && !formatIssue(issue).startsWith(issue.path)) return `formatted issue does not start with its path: ${formatIssue(issue)}`;
  }
  return null;
}

export function runCase(c: FuzzCase): Outcome {
  let result;
  try {
    result = validateScene(c.input);
  } catch (e) {
    return { kind: "failure", stage: "validate", message: `validateScene threw ${errorText(e)}` };
  }

  if (!result.ok) {
    const problem = issueProblem(result.issues, typeof c.input === "string" ? c.input : null, c.input);
    if (problem) return { kind: "failure", stage: "validate", message: problem };
    return { kind: "rejected", issues: result.issues.length };
  }

  const scene = shrinkForFuzz(result.scene);
  let compiled;
  try {
    compiled = compileScene(scene, c.assets);
  } catch (e) {
    if (e instanceof CompileError && e.path !== "" && e.message.trim() !== "") return { kind: "compile-error", path: e.path };
    return { kind: "failure", stage: "compile", message: `compileScene threw ${errorText(e)}` };
  }

  try {
    const { width, height } = compiled;
    const r = renderUnit(compiled, { x0: 0, y0: 0, x1: width, y1: height, passStart: 0, passEnd: 1 });
    if (r.samples !== 1) return { kind: "failure", stage: "render", message: `unit reports ${r.samples} samples, expected 1` };
    for (let i = 0; i < r.sums.length; i++) {
      const v = r.sums[i]!;
      if (!Number.isFinite(v) || v < 0 || !Number.isInteger(v)) {
        return { kind: "failure", stage: "render", message: `sum ${i} is ${v} (expected a finite non-negative integer)` };
      }
    }
    const acc = createAccumulation(width, height, compiled.groupNames.length);
    addUnit(acc, r);
    const img = resolveBeauty(acc);
    for (let i = 0; i < img.data.length; i++) {
      if (!Number.isFinite(img.data[i]!)) return { kind: "failure", stage: "render", message: `beauty value ${i} is ${img.data[i]}` };
    }
    return { kind: "rendered", pixels: width * height };
  } catch (e) {
    return { kind: "failure", stage: "render", message: `render threw ${errorText(e)}` };
  }
}

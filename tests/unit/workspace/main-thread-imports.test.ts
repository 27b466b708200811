// Guard for "the page's main thread never runs tracer code" on the scene workspace: walks the import graph
// of the workspace route module, every module under app/components/workspace and the workspace store, as the
// client bundle would (static and dynamic imports, re-exports; `import type` and `export type` vanish in
// the build; *.server modules are stripped from client bundles; `new Worker(new URL(...))` starts a separate
// bundle), and fails if any of them reaches code that validates, compiles, traces, accumulates or maps
// pixels for display. Under verbatimModuleSyntax `import { type X }` still loads the module, so only
// `import type` counts as types-only here.
import { existsSync, readdirSync, readFileSync, statSync } from "node:fs";
import { dirname, join, relative, resolve } from "node:path";
import ts from "typescript";
import { describe, expect, it } from "vitest";

const ROOT = resolve(__dirname, "../../..");
const rel = (abs: string) => relative(ROOT, abs).split("\\").join("/");

type Edge = { from: string; to: string; kind: "static" | "dynamic" | "re-export" };
type ModuleImports = { values: { spec: string; kind: Edge["kind"] }[]; types: string[]; workers: string[] };

/** The imports of one module's source text, split into those that load code and those that are only types. */
export function importsOf(fileName: string, text: string): ModuleImports {
  const sf = ts.createSourceFile(fileName, text, ts.ScriptTarget.ES2022, true, fileName.endsWith("x") ? ts.ScriptKind.TSX : ts.ScriptKind.TS);
  const out: ModuleImports = { values: [], types: [], workers: [] };
  const visit = (node: ts.Node) => {
    if (ts.isImportDeclaration(node) && ts.isStringLiteral(node.moduleSpecifier)) {
      if (node.importClause?.isTypeOnly) out.types.push(node.moduleSpecifier.text);
      else out.values.push({ spec: node.moduleSpecifier.text, kind: "static" });
    } else if (ts.isExportDeclaration(node) && node.moduleSpecifier && ts.isStringLiteral(node.moduleSpecifier)) {
      if (node.isTypeOnly) out.types.push(node.moduleSpecifier.text);
      else out.values.push({ spec: node.moduleSpecifier.text, kind: "re-export" });
    } else if (ts.isCallExpression(node) && node.expression.kind === ts.SyntaxKind.ImportKeyword) {
      const arg = node.arguments[0];
      if (arg && ts.isStringLiteralLike(arg)) out.values.push({ spec: arg.text, kind: "dynamic" });
      else throw new Error(`${fileName}: an import() with a computed name cannot be checked`);
    } else if (ts.isNewExpression(node) && ts.isIdentifier(node.expression) && /^(Shared)?Worker$/.test(node.expression.text)) {
      const u = node.arguments?.[0];
      if (u && ts.isNewExpression(u) && ts.isIdentifier(u.expression) && u.expression.text === "URL" && u.arguments?.[0] && ts.isStringLiteralLike(u.arguments[0])) {
        out.workers.push(u.arguments[0].text);
      }
    }
    ts.forEachChild(node, visit);
  };
  visit(sf);
  return out;
}

/** Project file a specifier names, or null for a package (node_modules is not walked). */
function resolveSpec(from: string, spec: string, lenient = false): string | null {
  const bare = spec.split("?")[0]!;
  let base: string;
  if (bare.startsWith("~/")) base = join(ROOT, "app", bare.slice(2));
  else if (bare.startsWith("@tracer/")) base = join(ROOT, "tracer", bare.slice(8));
  else if (bare.startsWith(".")) base = resolve(dirname(from), bare);
  else return null;
  for (const candidate of [base, `${base}.ts`, `${base}.tsx`, join(base, "index.ts"), join(base, "index.tsx")]) {
    if (existsSync(candidate) && statSync(candidate).isFile()) return candidate;
  }
  if (lenient) return null; // generated route types (./+types/…) exist only after typegen
  throw new Error(`${rel(from)}: cannot resolve "${spec}"`);
}

const isServerOnly = (file: string) => /\.server\.tsx?$/.test(file) || /\/\.server\//.test(file);

/** Every project module whose code a bundle starting at `roots` loads, with the edge that first reached it. */
function walk(roots: string[]): { reached: Map<string, Edge | null>; workerEntries: Set<string>; typeOnly: Set<string> } {
  const reached = new Map<string, Edge | null>();
  const workerEntries = new Set<string>();
  const typeOnly = new Set<string>();
  const queue = [...roots];
  for (const r of roots) reached.set(r, null);
  while (queue.length) {
    const file = queue.shift()!;
    if (!/\.(ts|tsx)$/.test(file)) continue; // JSON and other assets import nothing
    const imp = importsOf(file, readFileSync(file, "utf8"));
    for (const w of imp.workers) workerEntries.add(rel(resolveSpec(file, w)!));
    for (const t of imp.types) {
      const to = resolveSpec(file, t, true);
      if (to) typeOnly.add(rel(to));
    }
    for (const v of imp.values) {
      const to = resolveSpec(file, v.spec);
      if (!to || isServerOnly(to) || reached.has(to)) continue;
      if (/\?worker/.test(v.spec)) {
        workerEntries.add(rel(to));
        continue;
      }
      reached.set(to, { from: rel(file), to: rel(to), kind: v.kind });
      queue.push(to);
    }
  }
  return { reached, workerEntries, typeOnly };
}

/** How a module was reached: root → … → module. */
function chain(reached: Map<string, Edge | null>, file: string): string {
  const parts = [rel(file)];
  let e = reached.get(file);
  while (e) {
    parts.unshift(e.from);
    e = reached.get(join(ROOT, e.from));
  }
  return parts.join(" → ");
}

function filesUnder(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = join(dir, name);
    return statSync(p).isDirectory() ? filesUnder(p) : /\.(ts|tsx)$/.test(name) ? [p] : [];
  });
}

/** Tracer code that must run only in workers (or on the server): checking, compiling, tracing, accumulating, display. */
const FORBIDDEN: { label: string; test: (relPath: string) => boolean }[] = [
  { label: "scene validation", test: (p) => p === "tracer/scene/validate.ts" },
  { label: "display transform", test: (p) => p === "tracer/film/display.ts" },
  { label: "accumulation", test: (p) => p === "tracer/film/accumulate.ts" },
  { label: "rendering", test: (p) => p.startsWith("tracer/render/") },
  { label: "compiling", test: (p) => p.startsWith("tracer/compile/") },
  { label: "integrators", test: (p) => p.startsWith("tracer/integrators/") },
  { label: "BVH", test: (p) => p.startsWith("tracer/bvh/") },
  { label: "tracer workers", test: (p) => p.startsWith("tracer/workers/") },
  { label: "per-pixel picture work", test: (p) => p === "app/lib/workspace-picture.ts" },
  { label: "a worker module loaded as page code", test: (p) => /\.worker\.ts$/.test(p) },
];
/** The only tracer files the page may load as code: the scene format's JSON Schema (data for the editor's completion). */
const TRACER_ALLOWED = new Set(["tracer/scene/scene.schema.json"]);

const ROUTE = join(ROOT, "app/routes/projects.$projectId.scenes.$sceneId.tsx");
const PAGE_ROOTS = [ROUTE, join(ROOT, "app/stores/workspace.ts"), ...filesUnder(join(ROOT, "app/components/workspace"))];

describe("the workspace page's main thread loads no tracer code", () => {
  const page = walk(PAGE_ROOTS);
  const reachedRel = [...page.reached.keys()].map(rel);

  it("none of the page's modules reaches validation, compiling, tracing, accumulation or the display transform", () => {
    const offences = [...page.reached.keys()].flatMap((file) => {
      const r = rel(file);
      const hit = FORBIDDEN.find((f) => f.test(r));
      return hit ? [`${hit.label}: ${chain(page.reached, file)}`] : [];
    });
    expect(offences).toEqual([]);
    const tracerCode = reachedRel.filter((r) => r.startsWith("tracer/") && !TRACER_ALLOWED.has(r));
    expect(tracerCode).toEqual([]);
  });

  it("walks what the page really loads: the lazy editor, the preview client and the check client", () => {
    // If these were missed the test above would pass for the wrong reason.
    for (const m of ["app/components/workspace/scene-editor.client.tsx", "app/lib/workspace-render.ts", "app/lib/workspace-check.ts", "app/lib/workspace-image.ts"]) {
      expect(reachedRel, m).toContain(m);
    }
    // Types from the tracer and the workers are fine: they vanish in the build.
    expect([...page.typeOnly]).toEqual(expect.arrayContaining(["tracer/scene/validate.ts", "app/lib/workspace-session.worker.ts", "app/lib/workspace-check.worker.ts"]));
  });

  it("starts the tracer's work in the two workspace workers, whose bundles do hold it", () => {
    expect([...page.workerEntries].filter((w) => w.startsWith("app/lib/workspace-")).sort()).toEqual([
      "app/lib/workspace-check.worker.ts",
      "app/lib/workspace-session.worker.ts",
    ]);
    const session = [...walk([join(ROOT, "app/lib/workspace-session.worker.ts")]).reached.keys()].map(rel);
    for (const m of ["tracer/film/display.ts", "tracer/film/accumulate.ts", "tracer/compile/compile.ts", "tracer/render/meter.ts", "app/lib/workspace-picture.ts"]) {
      expect(session, m).toContain(m);
    }
    const check = [...walk([join(ROOT, "app/lib/workspace-check.worker.ts")]).reached.keys()].map(rel);
    expect(check).toContain("tracer/scene/validate.ts");
  });

  it("tells code imports from type imports as the build does", () => {
    const m = importsOf(
      "x.ts",
      [
        'import type { A } from "@tracer/film/display";',
        'import { type B } from "@tracer/scene/validate";', // still loads the module under verbatimModuleSyntax
        'export type { C } from "@tracer/compile/types";',
        'export { d } from "./d";',
        'const e = () => import("@tracer/render/meter");',
        'new Worker(new URL("./w.worker.ts", import.meta.url), { type: "module" });',
      ].join("\n"),
    );
    expect(m.types).toEqual(["@tracer/film/display", "@tracer/compile/types"]);
    expect(m.values).toEqual([
      { spec: "@tracer/scene/validate", kind: "static" },
      { spec: "./d", kind: "re-export" },
      { spec: "@tracer/render/meter", kind: "dynamic" },
    ]);
    expect(m.workers).toEqual(["./w.worker.ts"]);
  });
});

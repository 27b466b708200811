/**
 * Command-line renderer (Node):
 *   npm run render -- <scene.json> --out <file.pfm|.hdr|.png> [--spp N] [--seed S] [--workers K] [--groups] [--quiet]
 * Flags override the scene's render block. --groups also writes one file per light group beside the
 * output, named <out-stem>.<group>.<ext>. Progress goes to stderr; the last line on stdout is one JSON
 * object describing the render. An invalid scene, flag or asset exits non-zero with path-named errors on
 * stderr and writes nothing. Exit codes: 0 done, 1 invalid scene/asset or render failure, 2 bad usage.
 */
import { existsSync, statSync } from "node:fs";
import { readFile, rename, unlink, writeFile } from "node:fs/promises";
import { availableParallelism } from "node:os";
import path from "node:path";
import { parseArgs } from "node:util";
import { validateScene, formatIssue, type SceneIssue } from "./scene/validate";
import { LIMITS } from "./scene/limits";
import type { Scene } from "./scene/schema";
import { checkSceneAssets } from "./scene/assets";
// ".js": without an extension, "files.node" would be taken for a native addon (.node) by the resolver.
import { loadSceneAssetsFromDisk, AssetLoadError } from "./io/files.node.js";
import { compileScene, CompileError } from "./compile/compile";
import type { CompiledScene } from "./compile/types";
import { renderUnit, createRenderScratch } from "./render/unit";
import {
  accumulationHash,
  addUnit,
  createAccumulation,
  resolveBeauty,
  resolveGroup,
  type Accumulation,
  type RenderUnit,
} from "./film/accumulate";
import { encodePfm } from "./io/pfm";
import { encodeHdr } from "./io/rgbe";
import { imageToPng } from "./io/png";
import type { FloatImage } from "./io/image";
import { TRACER_VERSION } from "./version";

const USAGE = `usage: npm run render -- <scene.json> --out <file.pfm|.hdr|.png> [--spp N] [--seed S] [--workers K] [--groups] [--quiet]
  --out FILE     output image; the extension picks the format (.pfm, .hdr: linear radiance; .png: 8-bit sRGB after the scene's display settings)
  --spp N        samples per pixel (overrides render.spp), 1..${LIMITS.maxSpp}
  --seed S       unsigned 32-bit seed (overrides render.seed)
  --workers K    worker threads (default: one per core); the result is identical for any K
  --groups       also write one image per light group: <out-stem>.<group>.<ext>
  --quiet        no progress on stderr`;

const TILE = 32;
type OutputKind = "pfm" | "hdr" | "png";

class UsageError extends Error {}
class InputError extends Error {}

function parseIntFlag(name: string, value: string | undefined, min: number, max: number): number | undefined {
  if (value === undefined) return undefined;
  if (!/^\d+$/.test(value)) throw new UsageError(`--${name}: must be a whole number, got ${JSON.stringify(value)}`);
  const n = Number(value);
  if (n < min || n > max) throw new UsageError(`--${name}: must be between ${min} and ${max}, got ${value}`);
  return n;
}

type Options = {
  scenePath: string;
  out: string;
  kind: OutputKind;
  spp?: number;
  seed?: number;
  workers: number;
  groups: boolean;
  quiet: boolean;
};

function parseOptions(argv: string[]): Options {
  let parsed;
  try {
    parsed = parseArgs({
      args: argv,
      allowPositionals: true,
      strict: true,
      options: {
        out: { type: "string", short: "o" },
        spp: { type: "string" },
        seed: { type: "string" },
        workers: { type: "string" },
        groups: { type: "boolean" },
        quiet: { type: "boolean", short: "q" },
        help: { type: "boolean", short: "h" },
      },
    });
  } catch (e) {
    throw new UsageError((e as Error).message);
  }
  const { values, positionals } = parsed;
  if (values.help) {
    process.stdout.write(USAGE + "\n");
    process.exit(0);
  }
  if (positionals.length !== 1) throw new UsageError(positionals.length === 0 ? "missing <scene.json>" : `expected one scene file, got ${positionals.length}: ${positionals.join(" ")}`);
  if (!values.out) throw new UsageError("--out: required");
  const ext = path.extname(values.out).toLowerCase();
  const kind = ({ ".pfm": "pfm", ".hdr": "hdr", ".png": "png" } as const)[ext as ".pfm" | ".hdr" | ".png"];
  if (!kind) throw new UsageError(`--out: the file name must end in .pfm, .hdr or .png (got ${JSON.stringify(ext || values.out)})`);
  const outDir = path.dirname(path.resolve(values.out));
  if (!existsSync(outDir) || !statSync(outDir).isDirectory()) throw new UsageError(`--out: folder ${outDir} does not exist`);
  return {
    scenePath: positionals[0]!,
    out: values.out,
    kind,
    spp: parseIntFlag("spp", values.spp, 1, LIMITS.maxSpp),
    seed: parseIntFlag("seed", values.seed, 0, 0xffffffff),
    workers: parseIntFlag("workers", values.workers, 1, 256) ?? availableParallelism(),
    groups: values.groups === true,
    quiet: values.quiet === true,
  };
}

function issueLines(file: string, issues: readonly SceneIssue[]): string {
  return issues.map((i) => `${file}: ${formatIssue(i)}`).join("\n");
}

async function loadScene(opts: Options): Promise<{ scene: Scene; assets: Map<string, Uint8Array> }> {
  let text: string;
  try {
    text = await readFile(opts.scenePath, "utf8");
  } catch (e) {
    throw new InputError(`${opts.scenePath}: cannot read the scene file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`);
  }
  const result = validateScene(text);
  if (!result.ok) throw new InputError(issueLines(opts.scenePath, result.issues));
  const scene = result.scene;
  if (opts.spp !== undefined) scene.render.spp = opts.spp;
  if (opts.seed !== undefined) scene.render.seed = opts.seed;
  let assets: Map<string, Uint8Array>;
  try {
    assets = await loadSceneAssetsFromDisk(scene, path.dirname(path.resolve(opts.scenePath)));
  } catch (e) {
    if (e instanceof AssetLoadError) throw new InputError(issueLines(opts.scenePath, e.issues));
    throw e;
  }
  const assetIssues = checkSceneAssets(scene, assets);
  if (assetIssues.length) throw new InputError(issueLines(opts.scenePath, assetIssues));
  return { scene, assets };
}

/** Pass ranges: a few chunks so progress can be reported, each covering every tile. */
function passChunks(spp: number): [number, number][] {
  const chunk = Math.max(1, Math.ceil(spp / 8));
  const out: [number, number][] = [];
  for (let p = 0; p < spp; p += chunk) out.push([p, Math.min(spp, p + chunk)]);
  return out;
}

function tiles(width: number, height: number, passStart: number, passEnd: number): RenderUnit[] {
  const units: RenderUnit[] = [];
  for (let y0 = 0; y0 < height; y0 += TILE) {
    for (let x0 = 0; x0 < width; x0 += TILE) {
      units.push({ x0, y0, x1: Math.min(width, x0 + TILE), y1: Math.min(height, y0 + TILE), passStart, passEnd });
    }
  }
  return units;
}

async function render(compiled: CompiledScene, opts: Options, progress: (passesDone: number) => void): Promise<{ acc: Accumulation; workers: number }> {
  if (opts.workers <= 1) {
    const acc = createAccumulation(compiled.width, compiled.height, compiled.groupNames.length);
    const chunks = passChunks(compiled.spp);
    const scratch = createRenderScratch(compiled);
    for (const [p0, p1] of chunks) {
      for (const unit of tiles(compiled.width, compiled.height, p0, p1)) addUnit(acc, renderUnit(compiled, unit, scratch));
      progress(p1);
    }
    return { acc, workers: 1 };
  }
  const { createNodePool } = await import("./workers/node-pool");
  const { renderProgressive } = await import("./workers/render-session");
  const pool = createNodePool(opts.workers);
  try {
    await pool.loadScene(compiled);
    const passesPerUnit = Math.max(1, Math.ceil(compiled.spp / 8));
    const session = renderProgressive(compiled, {
      pool,
      passesPerUnit,
      tileSize: TILE,
      onProgress: (e) => progress(e.passesDone),
    });
    const result = await session.done;
    return { acc: result.accumulation, workers: opts.workers };
  } finally {
    await pool.terminate();
  }
}

function encode(kind: OutputKind, img: FloatImage, scene: Scene): Uint8Array {
  if (kind === "pfm") return encodePfm(img);
  if (kind === "hdr") return encodeHdr(img);
  return imageToPng(img, scene.display);
}

/** Writes every file to a temporary name first, then renames, so a failure leaves no partial output. */
async function writeOutputs(files: { file: string; bytes: Uint8Array }[]): Promise<void> {
  const temps: string[] = [];
  try {
    for (const f of files) {
      const tmp = `${f.file}.partial-${process.pid}`;
      temps.push(tmp);
      await writeFile(tmp, f.bytes);
    }
    for (let i = 0; i < files.length; i++) await rename(temps[i]!, files[i]!.file);
  } catch (e) {
    await Promise.all(temps.map((t) => unlink(t).catch(() => undefined)));
    throw e;
  }
}

export async function main(argv: string[]): Promise<number> {
  let opts: Options;
  try {
    opts = parseOptions(argv);
  } catch (e) {
    if (e instanceof UsageError) {
      process.stderr.write(`error: ${e.message}\n${USAGE}\n`);
      return 2;
    }
    throw e;
  }
  try {
    const { scene, assets } = await loadScene(opts);
    let compiled: CompiledScene;
    try {
      compiled = compileScene(scene, assets);
    } catch (e) {
      if (e instanceof CompileError) throw new InputError(`${opts.scenePath}: ${e.message}`);
      throw e;
    }
    const started = performance.now();
    const progress = (done: number) => {
      if (opts.quiet) return;
      const s = (performance.now() - started) / 1000;
      process.stderr.write(`pass ${done}/${compiled.spp} (${((100 * done) / compiled.spp).toFixed(0)}%), ${s.toFixed(1)} s\n`);
    };
    const { acc, workers } = await render(compiled, opts, progress);
    const seconds = (performance.now() - started) / 1000;

    const files: { file: string; bytes: Uint8Array }[] = [{ file: opts.out, bytes: encode(opts.kind, resolveBeauty(acc), scene) }];
    if (opts.groups) {
      const ext = path.extname(opts.out);
      const stem = opts.out.slice(0, opts.out.length - ext.length);
      compiled.groupNames.forEach((g, i) => files.push({ file: `${stem}.${g}${ext}`, bytes: encode(opts.kind, resolveGroup(acc, i), scene) }));
    }
    await writeOutputs(files);
    const samples = compiled.width * compiled.height * compiled.spp;
    const summary = {
      spp: compiled.spp,
      seconds: Number(seconds.toFixed(3)),
      samplesPerSecond: Math.round(samples / Math.max(seconds, 1e-9)),
      accumulationHash: accumulationHash(acc),
      tracerVersion: TRACER_VERSION,
      width: compiled.width,
      height: compiled.height,
      groups: compiled.groupNames,
      seed: compiled.seed,
      workers,
      outputs: files.map((f) => f.file),
    };
    process.stdout.write(JSON.stringify(summary) + "\n");
    return 0;
  } catch (e) {
    if (e instanceof InputError) {
      process.stderr.write(e.message + "\n");
      return 1;
    }
    process.stderr.write(`render failed: ${(e as Error).stack ?? String(e)}\n`);
    return 1;
  }
}

const invokedDirectly = process.argv[1] !== undefined && path.resolve(process.argv[1]) === path.resolve(new URL(import.meta.url).pathname);
if (invokedDirectly) {
  main(process.argv.slice(2)).then(
    (code) => process.exit(code),
    (e: unknown) => {
      process.stderr.write(`render failed: ${(e as Error).stack ?? String(e)}\n`);
      process.exit(1);
    },
  );
}

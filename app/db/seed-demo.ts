// The whole demo studio, in order: people and projects (seed-accounts), the example scenes with their
// histories, assets and a fork (seed-scenes), the lamp-launch studies, and a few published renders made here
// with the tracer at low spp. Every step is idempotent: it looks for what it would create (by name, by
// version and title) and adds only what is missing, so `bin/start` can run it on every start.
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { and, eq } from "drizzle-orm";
import { compileScene } from "@tracer/compile/compile";
import { addUnit, createAccumulation, type Accumulation } from "@tracer/film/accumulate";
import { renderUnit, createRenderScratch } from "@tracer/render/unit";
import { validateScene } from "@tracer/scene/validate";
import { TRACER_VERSION } from "@tracer/version";
import { renderOutputs } from "~/lib/render-outputs";
import { loadAssetsForScene } from "~/models/asset.server";
import { publishRender } from "~/models/render.server";
import { createSceneWith, saveVersionWith, getHead } from "~/models/scene.server";
import type { Database } from "~/services/db.server";
import { renders, scenes } from "./schema";
import { seedAccounts, type SeededAccounts } from "./seed-accounts";
import { seedScenes, type SeedScenesResult } from "./seed-scenes";

export type DemoSeedResult = {
  accounts: SeededAccounts;
  scenes: SeedScenesResult;
  lampStudies: { created: number; skipped: number };
  renders: { published: number; skipped: number };
};

type Json = Record<string, unknown>;
type Edit = { message: string; apply: (s: SceneJson) => void };
type SceneJson = {
  name: string;
  notes?: string;
  render: Json & { integrator?: string; spp: number };
  display?: Json & { exposure?: number };
  environment?: Json;
  objects: (Json & { id: string; shape: Json & { center?: number[] } })[];
  lights: (Json & { id: string; power?: number; intensity?: number[]; shape?: Json & { center?: number[] } })[];
};

function clone<T>(v: T): T {
  return JSON.parse(JSON.stringify(v)) as T;
}

function light(s: SceneJson, id: string) {
  const l = s.lights.find((x) => x.id === id);
  if (!l) throw new Error(`lamp study has no light "${id}"`);
  return l;
}

/**
 * The Osier lamp launch: six studies derived from the example desk study, each with a first version and one
 * follow-up edit by a colleague, as the lighting team would have left them.
 */
const LAMP_STUDIES: { name: string; notes: string; start: (s: SceneJson) => void; then: Edit }[] = [
  {
    name: "Osier lamp desk study",
    notes: "The desk study every lamp variant starts from.",
    start: () => undefined,
    then: { message: "Pendant a touch warmer to match the bulb", apply: (s) => (light(s, "ceiling-pendant").intensity = [0.52, 0.45, 0.36]) },
  },
  {
    name: "Osier lamp: warm reading light",
    notes: "A 60 W bulb for the reading-light shot of the launch page.",
    start: (s) => (light(s, "osier-bulb").power = 60),
    then: { message: "Half a stop down so the notebook page keeps its texture", apply: (s) => (s.display = { ...s.display, exposure: 0.5 }) },
  },
  {
    name: "Osier lamp: shade lowered",
    notes: "The arm at its lowest notch: a tighter pool of light on the desk.",
    start: (s) => {
      for (const o of s.objects) if (o.id === "lamp-shade" && o.shape.center) o.shape.center[1] -= 0.06;
      const bulb = light(s, "osier-bulb");
      if (bulb.shape?.center) bulb.shape.center[1] -= 0.06;
    },
    then: { message: "Pendant dimmed to keep the pool of light readable", apply: (s) => (light(s, "ceiling-pendant").intensity = [0.25, 0.22, 0.19]) },
  },
  {
    name: "Osier lamp: cool pendant",
    notes: "Evening room light from a cooler ceiling pendant against the warm lamp.",
    start: (s) => (light(s, "ceiling-pendant").intensity = [0.35, 0.42, 0.55]),
    then: { message: "Lamp a little brighter to hold the warm/cool balance", apply: (s) => (light(s, "osier-bulb").power = 50) },
  },
  {
    name: "Osier lamp: path traced",
    notes: "The desk study with interreflections, to check the light the walnut bounces onto the wall.",
    start: (s) => (s.render = { ...s.render, integrator: "path", spp: 16 }),
    then: { message: "Reinhard replaced by the filmic curve for the soft highlights", apply: (s) => (s.display = { ...s.display, toneMap: "filmic" }) },
  },
  {
    name: "Osier lamp: morning window",
    notes: "Daylight through the studio window; the lamp switched off.",
    start: (s) => {
      light(s, "osier-bulb").power = 0;
      s.environment = { type: "sky", zenith: [0.3, 0.42, 0.7], horizon: [0.85, 0.82, 0.76], ground: [0.12, 0.11, 0.1] };
    },
    then: { message: "Exposure down a stop for the brighter sky", apply: (s) => (s.display = { ...s.display, exposure: 0 }) },
  },
  {
    name: "Osier lamp with the glass carafe",
    notes: "The carafe from the kettle shoot placed under the lamp, to see the caustic on the walnut.",
    start: (s) => {
      (s as unknown as { materials: Json }).materials = { ...(s as unknown as { materials: Json }).materials, "carafe-glass": { type: "glass", ior: 1.5 } };
      s.objects.push({ id: "carafe", shape: { type: "sphere", center: [0.05, 0.11, 0.05], radius: 0.07 }, material: "carafe-glass" });
      s.render = { ...s.render, integrator: "path", spp: 16 };
    },
    then: { message: "Carafe moved into the lamp's pool of light", apply: (s) => {
      const c = s.objects.find((o) => o.id === "carafe");
      if (c?.shape.center) c.shape.center[0] = -0.05;
    } },
  },
];

async function seedLampStudies(conn: Database, projectId: string, authors: string[], scenesDir: string): Promise<{ created: number; skipped: number }> {
  const out = { created: 0, skipped: 0 };
  const lampStudy = JSON.parse(readFileSync(join(scenesDir, "osier-lamp-study.json"), "utf8")) as unknown;
  for (const [i, study] of LAMP_STUDIES.entries()) {
    const [existing] = await conn.select({ id: scenes.id }).from(scenes).where(and(eq(scenes.projectId, projectId), eq(scenes.name, study.name)));
    if (existing) {
      out.skipped++;
      continue;
    }
    const json = clone(lampStudy) as unknown as SceneJson;
    json.name = study.name;
    json.notes = study.notes;
    study.start(json);
    const author = authors[i % authors.length]!;
    const created = await createSceneWith(conn, { projectId, name: study.name, scene: json, authorId: author, message: "First placement" });
    if (!created.ok) throw new Error(`${study.name}: ${created.issues.map((x) => `${x.path}: ${x.message}`).join("; ")}`);
    const next = clone(json);
    study.then.apply(next);
    const saved = await saveVersionWith(conn, {
      sceneId: created.scene.id,
      parentVersionId: created.version.id,
      scene: next,
      message: study.then.message,
      authorId: authors[(i + 1) % authors.length]!,
    });
    if (!saved.ok) throw new Error(`${study.name}: could not save "${study.then.message}" (${saved.reason})`);
    out.created++;
  }
  return out;
}

/** Passes [0, passes) over the whole image, in 32-pixel tiles, into one accumulation. */
export function renderLowSpp(scene: Parameters<typeof compileScene>[0], assets: Map<string, Uint8Array>, passes: number): { acc: Accumulation; groupNames: string[]; ms: number } {
  const started = performance.now();
  const compiled = compileScene(scene, assets);
  const acc = createAccumulation(compiled.width, compiled.height, compiled.groupNames.length);
  const scratch = createRenderScratch(compiled);
  const TILE = 32;
  for (let y0 = 0; y0 < compiled.height; y0 += TILE) {
    for (let x0 = 0; x0 < compiled.width; x0 += TILE) {
      const unit = { x0, y0, x1: Math.min(compiled.width, x0 + TILE), y1: Math.min(compiled.height, y0 + TILE), passStart: 0, passEnd: passes };
      addUnit(acc, renderUnit(compiled, unit, scratch));
    }
  }
  return { acc, groupNames: compiled.groupNames, ms: performance.now() - started };
}

/** Which head versions get a published render: a few from each project, at low spp so seeding stays quick. */
const DEMO_RENDERS: { project: "kettle" | "lamp"; scene: string; title: string; passes: number; by: "maren" | "tobias" | "ines" }[] = [
  { project: "kettle", scene: "Wren kettle on the turntable", title: "Turntable preview for the catalogue", passes: 4, by: "tobias" },
  { project: "kettle", scene: "Material spheres in the lightbox", title: "Glaze and metal reference", passes: 4, by: "maren" },
  { project: "lamp", scene: "Osier lamp: warm reading light", title: "Reading light, first look", passes: 4, by: "ines" },
  { project: "lamp", scene: "Osier lamp desk study", title: "Desk study preview", passes: 2, by: "ines" },
];

async function seedRenders(conn: Database, accounts: SeededAccounts): Promise<{ published: number; skipped: number }> {
  const out = { published: 0, skipped: 0 };
  for (const spec of DEMO_RENDERS) {
    const projectId = accounts.projects[spec.project];
    const [scene] = await conn.select().from(scenes).where(and(eq(scenes.projectId, projectId), eq(scenes.name, spec.scene)));
    if (!scene) continue; // the example was renamed or removed: nothing to render
    const head = await getHead(scene.id);
    if (!head) continue;
    const [existing] = await conn.select({ id: renders.id }).from(renders).where(and(eq(renders.sceneId, scene.id), eq(renders.title, spec.title)));
    if (existing) {
      out.skipped++;
      continue;
    }
    const checked = validateScene(head.scene);
    if (!checked.ok) throw new Error(`${spec.scene}: the head version does not validate`);
    const assets = await loadAssetsForScene(projectId, checked.scene);
    const { acc, groupNames, ms } = renderLowSpp(checked.scene, assets, spec.passes);
    const files = renderOutputs(acc, checked.scene.display, groupNames);
    await publishRender({
      projectId,
      sceneId: scene.id,
      createdBy: accounts.people[spec.by],
      meta: {
        versionId: head.id,
        title: spec.title,
        spp: spec.passes,
        seed: checked.scene.render.seed,
        width: files.width,
        height: files.height,
        integrator: checked.scene.render.integrator,
        tracerVersion: TRACER_VERSION,
        accumulationHash: files.accumulationHash,
        renderMs: ms,
        samplesPerSecond: ms > 0 ? (files.width * files.height * spec.passes) / (ms / 1000) : 0,
        groups: Object.keys(files.groups),
      },
      files: { pfm: files.pfm, hdr: files.hdr, png: files.png, thumb: files.thumb, state: files.state, groups: Object.keys(files.groups).length ? files.groups : undefined },
    });
    out.published++;
  }
  return out;
}

/**
 * A second fork, across projects the other way: the catalogue team borrows the warm reading-light study for a
 * kettle-and-lamp still life. The lamp scene has no uploaded assets, so nothing needs copying.
 */
async function seedCatalogueFork(conn: Database, accounts: SeededAccounts): Promise<number> {
  const name = "Osier lamp: warm reading light (catalogue fork)";
  const target = accounts.projects.kettle;
  const [existing] = await conn.select({ id: scenes.id }).from(scenes).where(and(eq(scenes.projectId, target), eq(scenes.name, name)));
  if (existing) return 0;
  const [source] = await conn.select().from(scenes).where(and(eq(scenes.projectId, accounts.projects.lamp), eq(scenes.name, "Osier lamp: warm reading light")));
  const head = source ? await getHead(source.id) : null;
  if (!head) return 0;
  const fork = await createSceneWith(conn, {
    projectId: target,
    name,
    scene: head.scene,
    authorId: accounts.people.tobias,
    kind: "fork",
    forkedFromVersionId: head.id,
    message: "Forked from “Osier lamp: warm reading light” for the catalogue still life",
  });
  if (!fork.ok) throw new Error(`${name}: ${fork.issues.map((x) => `${x.path}: ${x.message}`).join("; ")}`);
  const warmer = clone(head.scene) as unknown as SceneJson;
  warmer.display = { ...warmer.display, exposure: 0.25 };
  const saved = await saveVersionWith(conn, { sceneId: fork.scene.id, parentVersionId: fork.version.id, scene: warmer, message: "A quarter stop brighter for print", authorId: accounts.people.tobias });
  if (!saved.ok) throw new Error(`${name}: could not save (${saved.reason})`);
  return 1;
}

export async function seedDemo(conn: Database): Promise<DemoSeedResult> {
  const accounts = await seedAccounts(conn);
  const { maren, tobias, ines } = accounts.people;
  const sceneResult = await seedScenes(conn, { projectIds: [accounts.projects.kettle, accounts.projects.lamp], userIds: [maren, tobias, ines] });
  const lampStudies = await seedLampStudies(conn, accounts.projects.lamp, [ines, tobias, maren], join(process.cwd(), "scenes"));
  sceneResult.forks += await seedCatalogueFork(conn, accounts);
  const published = await seedRenders(conn, accounts);
  return { accounts, scenes: sceneResult, lampStudies, renders: published };
}

// Unique users and projects for scene/render/asset integration tests (the test DB is shared: never truncate).
import { randomUUID } from "node:crypto";
import { memberships, projects, users } from "~/db/schema";
import { db } from "~/services/db.server";
import { compileScene } from "@tracer/compile/compile";
import { addUnit, createAccumulation } from "@tracer/film/accumulate";
import { renderUnit } from "@tracer/render/unit";
import { validateScene } from "@tracer/scene/validate";
import { tileUnits } from "@tracer/workers/pool";
import { renderOutputs } from "~/lib/render-outputs";
import type { PublishMeta } from "~/lib/publish-render.client";
import { TRACER_VERSION } from "@tracer/version";

export async function makeUser(label = "user") {
  const tag = randomUUID().slice(0, 8);
  const [user] = await db()
    .insert(users)
    .values({ email: `${label}-${tag}@example.test`, name: `${label} ${tag}`, passwordHash: "not-a-real-hash" })
    .returning();
  return user!;
}

export async function makeProject(ownerId: string, name = "Harrow Lane test project") {
  const [project] = await db().insert(projects).values({ name: `${name} ${randomUUID().slice(0, 6)}`, createdBy: ownerId }).returning();
  await db().insert(memberships).values({ projectId: project!.id, userId: ownerId, role: "owner" });
  return project!;
}

/** A small valid scene: the Wren kettle stand-in on a grey card under one rect light. */
export function kettleScene(overrides: { name?: string; roughness?: number; radiance?: [number, number, number]; spp?: number } = {}) {
  return {
    format: "tracewell.scene/1",
    name: overrides.name ?? "Wren kettle on grey card",
    image: { width: 16, height: 12 },
    camera: { position: [0, 1, 4], target: [0, 0.5, 0], fovY: 40 },
    render: { spp: overrides.spp ?? 4, seed: 7 },
    materials: {
      glaze: { type: "metal", reflectance: [0.8, 0.7, 0.6], roughness: overrides.roughness ?? 0.2 },
      card: { type: "diffuse", albedo: [0.5, 0.5, 0.5] },
    },
    objects: [
      { id: "kettle", shape: { type: "sphere", center: [0, 0.5, 0], radius: 0.5 }, material: "glaze" },
      { id: "card", shape: { type: "rect", center: [0, 0, 0], u: [4, 0, 0], v: [0, 0, -4] }, material: "card" },
    ],
    lights: [
      {
        id: "key",
        type: "area",
        shape: { type: "rect", center: [0, 3, 0], u: [1, 0, 0], v: [0, 0, 1] },
        radiance: overrides.radiance ?? [5, 5, 5],
      },
    ],
  };
}

/**
 * Renders a scene (no assets) to its own spp in Node and returns the files a publish stores, with the
 * validated scene: what tests publish as if a browser had rendered it.
 */
export function renderInNode(sceneJson: unknown) {
  const checked = validateScene(sceneJson);
  if (!checked.ok) throw new Error("invalid scene");
  const compiled = compileScene(checked.scene, new Map());
  const acc = createAccumulation(compiled.width, compiled.height, compiled.groupNames.length);
  for (const unit of tileUnits(compiled.width, compiled.height, 8, 0, compiled.spp)) addUnit(acc, renderUnit(compiled, unit));
  return { outputs: renderOutputs(acc, checked.scene.display, compiled.groupNames), scene: checked.scene };
}

/** The metadata a browser sends when it publishes `rendered` as a render of version `versionId`. */
export function publishMetaOf(
  versionId: string,
  rendered: ReturnType<typeof renderInNode>,
  facts: { title: string; renderMs: number; samplesPerSecond: number },
): PublishMeta {
  const { scene, outputs } = rendered;
  return {
    versionId,
    title: facts.title,
    spp: scene.render.spp,
    seed: scene.render.seed,
    width: scene.image.width,
    height: scene.image.height,
    integrator: scene.render.integrator,
    tracerVersion: TRACER_VERSION,
    accumulationHash: outputs.accumulationHash,
    renderMs: facts.renderMs,
    samplesPerSecond: facts.samplesPerSecond,
  };
}

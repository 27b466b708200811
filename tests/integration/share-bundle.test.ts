// Share links open only while active; bundles carry a version and its assets to another project, where the
// scene renders to the same accumulation hash (the tracer's exact integer accumulation makes "same" exact).
import { readFileSync } from "node:fs";
import { afterAll, describe, expect, it } from "vitest";
import { compileScene } from "@tracer/compile/compile";
import { accumulationHash, addUnit, createAccumulation } from "@tracer/film/accumulate";
import { renderUnit } from "@tracer/render/unit";
import { validateScene } from "@tracer/scene/validate";
import { tileUnits } from "@tracer/workers/pool";
import { loadAssetsForScene, uploadAsset } from "~/models/asset.server";
import { exportBundle, importBundle } from "~/models/bundle.server";
import { createScene, getVersion } from "~/models/scene.server";
import { createShareLink, listShareLinks, openShareLink, revokeShareLink } from "~/models/share.server";
import { dbPool } from "~/services/db.server";
import { ensureBucket } from "~/services/storage.server";
import { kettleScene, makeProject, makeUser } from "../support/a3-fixtures";

afterAll(async () => {
  await dbPool().end();
});

async function renderHash(projectId: string, sceneJson: Record<string, unknown>): Promise<string> {
  const checked = validateScene(sceneJson);
  if (!checked.ok) throw new Error("invalid");
  const compiled = compileScene(checked.scene, await loadAssetsForScene(projectId, sceneJson));
  const acc = createAccumulation(compiled.width, compiled.height, compiled.groupNames.length);
  for (const unit of tileUnits(compiled.width, compiled.height, 8, 0, compiled.spp)) addUnit(acc, renderUnit(compiled, unit));
  return accumulationHash(acc);
}

async function kettleWithMesh(projectId: string, userId: string) {
  const { asset } = await uploadAsset({ projectId, name: "wren-kettle.obj", bytes: new Uint8Array(readFileSync("scenes/meshes/wren-kettle.obj")), uploadedBy: userId });
  const scene = { ...kettleScene({ spp: 2 }), image: { width: 12, height: 9 } } as unknown as { objects: Record<string, unknown>[] } & Record<string, unknown>;
  scene.objects[0] = { id: "kettle", shape: { type: "mesh", asset: `sha256:${asset.sha256}`, scale: 2 }, material: "glaze" };
  return scene;
}

describe("share links", () => {
  it("open with an unguessable token, and stop opening when revoked or expired", async () => {
    const user = await makeUser("sharer");
    const project = await makeProject(user.id);
    const created = await createScene({ projectId: project.id, name: "Kettle", scene: kettleScene(), authorId: user.id });
    if (!created.ok) throw new Error("scene");
    const link = await createShareLink({ projectId: project.id, versionId: created.version.id, label: "class", createdBy: user.id });
    expect(link!.token).toMatch(/^[A-Za-z0-9_-]{43}$/); // 32 random bytes, base64url
    expect((await openShareLink(link!.token))?.version.id).toBe(created.version.id);
    expect(await openShareLink(link!.token.slice(0, -1) + (link!.token.endsWith("A") ? "B" : "A"))).toBeNull();

    expect(await revokeShareLink(project.id, link!.id)).toBe(true);
    expect(await openShareLink(link!.token)).toBeNull();

    const expiring = await createShareLink({ projectId: project.id, versionId: created.version.id, expiresAt: new Date(Date.now() + 60_000), createdBy: user.id });
    expect(await openShareLink(expiring!.token)).not.toBeNull();
    expect(await openShareLink(expiring!.token, new Date(Date.now() + 120_000))).toBeNull();
    expect((await listShareLinks(project.id)).length).toBe(2);
  });

  it("cannot point at a version of another project", async () => {
    const user = await makeUser();
    const mine = await makeProject(user.id);
    const theirs = await makeProject(user.id);
    const created = await createScene({ projectId: theirs.id, name: "Carafe", scene: kettleScene(), authorId: user.id });
    if (!created.ok) throw new Error("scene");
    expect(await createShareLink({ projectId: mine.id, versionId: created.version.id, createdBy: user.id })).toBeNull();
  });
});

describe("bundles", () => {
  it("export a version with its mesh and import it elsewhere with the same render hash", async () => {
    await ensureBucket();
    const user = await makeUser("bundler");
    const from = await makeProject(user.id);
    const to = await makeProject(user.id, "Receiving project");
    const scene = await kettleWithMesh(from.id, user.id);
    const created = await createScene({ projectId: from.id, name: "Kettle with mesh", scene, authorId: user.id });
    if (!created.ok) throw new Error(JSON.stringify(created.issues));

    const bundle = await exportBundle({ projectId: from.id, sceneName: "Kettle with mesh", version: created.version });
    expect(bundle.assets).toHaveLength(1);
    const text = JSON.stringify(bundle);

    const imported = await importBundle({ projectId: to.id, text, authorId: user.id });
    if (!imported.ok) throw new Error(JSON.stringify(imported));
    expect(imported.version.kind).toBe("import");
    const again = await getVersion(imported.version.id);
    expect(again!.scene).toEqual(created.version.scene);
    const [a, b] = [await renderHash(from.id, created.version.scene), await renderHash(to.id, again!.scene)];
    expect(a).toMatch(/^fnv1a64:[0-9a-f]{16}$/);
    expect(b).toBe(a);
  });

  it("refuses a bundle whose asset bytes do not match their hash, naming the asset", async () => {
    const user = await makeUser();
    const from = await makeProject(user.id);
    const scene = await kettleWithMesh(from.id, user.id);
    const created = await createScene({ projectId: from.id, name: "K", scene, authorId: user.id });
    if (!created.ok) throw new Error("scene");
    const bundle = await exportBundle({ projectId: from.id, sceneName: "K", version: created.version });
    bundle.assets[0]!.base64 = Buffer.from("v 0 0 0\n").toString("base64");
    const r = await importBundle({ projectId: from.id, text: JSON.stringify(bundle), authorId: user.id });
    expect(r.ok).toBe(false);
    if (!r.ok && r.reason === "bundle") expect(r.message).toMatch(/^assets\[0\] \(wren-kettle\.obj\): its bytes do not match sha256:/);
    const bad = await importBundle({ projectId: from.id, text: "{ not json", authorId: user.id });
    expect(!bad.ok && bad.reason === "bundle" && bad.message.startsWith("the file is not JSON")).toBe(true);
  });
});

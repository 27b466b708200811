// The demo studio seed: what the README promises is there (people in every role, two projects, a dozen scenes
// with histories and a fork, uploaded assets, published renders whose files exist and whose hash a re-render
// reproduces), and running it again changes nothing.
import { eq, inArray } from "drizzle-orm";
import { afterAll, describe, expect, it } from "vitest";
import { accumulationHash } from "@tracer/film/accumulate";
import { validateScene } from "@tracer/scene/validate";
import { assets, memberships, renders, scenes, sceneVersions } from "~/db/schema";
import { seedDemo, renderLowSpp } from "~/db/seed-demo";
import { loadAssetsForScene } from "~/models/asset.server";
import { getVersion } from "~/models/scene.server";
import { db, dbPool } from "~/services/db.server";
import { objectExists } from "~/services/storage.server";
import { renderFileKeys } from "~/services/render-files.server";

afterAll(async () => {
  await dbPool().end();
});

async function census(projectIds: string[]) {
  const sceneRows = await db().select().from(scenes).where(inArray(scenes.projectId, projectIds));
  const sceneIds = sceneRows.map((s) => s.id);
  const versionRows = sceneIds.length ? await db().select({ id: sceneVersions.id }).from(sceneVersions).where(inArray(sceneVersions.sceneId, sceneIds)) : [];
  const renderRows = await db().select().from(renders).where(inArray(renders.projectId, projectIds));
  const assetRows = await db().select({ sha: assets.sha256, projectId: assets.projectId }).from(assets).where(inArray(assets.projectId, projectIds));
  const memberRows = await db().select({ role: memberships.role, userId: memberships.userId, projectId: memberships.projectId }).from(memberships).where(inArray(memberships.projectId, projectIds));
  const ids = (xs: { id?: string; sha?: string; userId?: string; projectId?: string; role?: string }[]) => xs.map((x) => JSON.stringify(x)).sort();
  return {
    scenes: sceneRows,
    renders: renderRows,
    fingerprint: JSON.stringify({
      scenes: ids(sceneRows.map((s) => ({ id: s.id, head: s.headVersionId }))),
      versions: ids(versionRows),
      renders: ids(renderRows.map((r) => ({ id: r.id }))),
      assets: ids(assetRows),
      members: ids(memberRows),
    }),
    counts: { scenes: sceneRows.length, versions: versionRows.length, renders: renderRows.length, assets: assetRows.length, members: memberRows.length },
  };
}

describe("demo studio seed", () => {
  it("creates the studio the README describes, and a second run changes nothing", async () => {
    const first = await seedDemo(db());
    const projectIds = Object.values(first.accounts.projects);
    const before = await census(projectIds);

    // Two projects, five people, every role present (owners, editors, viewers).
    expect(projectIds).toHaveLength(2);
    expect(Object.keys(first.accounts.people)).toHaveLength(5);
    const roles = new Set((await db().select({ role: memberships.role }).from(memberships).where(inArray(memberships.projectId, projectIds))).map((m) => m.role));
    expect([...roles].sort()).toEqual(["editor", "owner", "viewer"]);
    // A dozen scenes with real histories, at least one fork, uploaded assets and published renders.
    expect(before.counts.scenes).toBeGreaterThanOrEqual(12);
    expect(before.counts.versions).toBeGreaterThanOrEqual(2 * before.counts.scenes);
    expect(before.scenes.filter((s) => s.forkedFromVersionId !== null).length).toBeGreaterThanOrEqual(2);
    expect(before.counts.assets).toBeGreaterThanOrEqual(2);
    const done = before.renders.filter((r) => r.status === "done");
    expect(done.length).toBeGreaterThanOrEqual(3);
    for (const r of done) {
      for (const key of renderFileKeys(r.files!)) expect(await objectExists(key), `${r.title}: ${key}`).toBe(true);
    }

    const second = await seedDemo(db());
    expect(second.scenes.created).toBe(0);
    expect(second.scenes.forks).toBe(0);
    expect(second.lampStudies.created).toBe(0);
    expect(second.renders.published).toBe(0);
    expect(second.accounts).toEqual(first.accounts);
    const after = await census(projectIds);
    expect(after.counts).toEqual(before.counts);
    expect(after.fingerprint).toBe(before.fingerprint);
  }, 600_000);

  it("a published demo render is reproduced bit for bit by rendering its version again", async () => {
    const [render] = await db().select().from(renders).where(eq(renders.title, "Desk study preview")).limit(1);
    expect(render, "the seed publishes the desk study preview").toBeDefined();
    const version = await getVersion(render!.versionId);
    const checked = validateScene(version!.scene);
    expect(checked.ok).toBe(true);
    if (!checked.ok) return;
    const again = renderLowSpp(checked.scene, await loadAssetsForScene(render!.projectId, checked.scene), render!.spp);
    expect(accumulationHash(again.acc)).toBe(render!.accumulationHash);
  }, 600_000);
});

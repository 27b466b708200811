// The demo seed loads every example scene with a short history and a fork, and is idempotent.
import { readdirSync } from "node:fs";
import { afterAll, describe, expect, it } from "vitest";
import { seedScenes } from "~/db/seed-scenes";
import { loadAssetsForScene } from "~/models/asset.server";
import { getForkOrigin, listScenes, listVersions } from "~/models/scene.server";
import { db, dbPool } from "~/services/db.server";
import { makeProject, makeUser } from "../support/a3-fixtures";

afterAll(async () => {
  await dbPool().end();
});

describe("seedScenes", () => {
  it("creates every example with versions, a restore and a fork, and adds nothing the second time", async () => {
    const [a, b] = [await makeUser("seed-a"), await makeUser("seed-b")];
    const studio = await makeProject(a.id, "Seed studio");
    const catalogue = await makeProject(a.id, "Seed catalogue");
    const first = await seedScenes(db(), { projectIds: [studio.id, catalogue.id], userIds: [a.id, b.id] });
    const files = readdirSync("scenes").filter((f) => f.endsWith(".json"));
    expect(first.created).toBe(files.length);
    expect(first.forks).toBe(1);

    const list = await listScenes(studio.id);
    expect(list).toHaveLength(files.length);
    for (const s of list) {
      const versions = await listVersions(s.id);
      expect(versions.length).toBeGreaterThanOrEqual(3);
      // Every web scene's assets resolve within its project.
      await expect(loadAssetsForScene(studio.id, versions[0]!.scene)).resolves.toBeInstanceOf(Map);
    }
    expect((await Promise.all(list.map((s) => listVersions(s.id)))).flat().some((v) => v.kind === "restore")).toBe(true);

    const [fork] = await listScenes(catalogue.id);
    expect(fork).toBeDefined();
    expect((await getForkOrigin(fork!))?.scene.projectId).toBe(studio.id);
    await expect(loadAssetsForScene(catalogue.id, (await listVersions(fork!.id))[0]!.scene)).resolves.toBeInstanceOf(Map);

    const second = await seedScenes(db(), { projectIds: [studio.id, catalogue.id], userIds: [a.id, b.id] });
    expect(second).toMatchObject({ created: 0, forks: 0, skipped: files.length });
    expect(await listScenes(studio.id)).toHaveLength(files.length);
  });
});

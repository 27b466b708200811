// Saves are compare-and-set on the scene's head: concurrent saves onto one parent must produce exactly one
// new version, and every loser must be told which version is now the head.
import { afterAll, describe, expect, it } from "vitest";
import {
  createScene,
  forkScene,
  getForkOrigin,
  getScene,
  listForks,
  listVersions,
  restoreVersion,
  saveVersion,
} from "~/models/scene.server";
import { dbPool } from "~/services/db.server";
import { kettleScene, makeProject, makeUser } from "../support/a3-fixtures";

afterAll(async () => {
  await dbPool().end();
});

describe("scene versions", () => {
  it("lets exactly one of 20 concurrent saves onto the same parent win; the rest get a conflict naming the head", async () => {
    const user = await makeUser("saver");
    const project = await makeProject(user.id);
    const created = await createScene({ projectId: project.id, name: "Kettle", scene: kettleScene(), authorId: user.id });
    expect(created.ok).toBe(true);
    if (!created.ok) return;
    const parent = created.version.id;

    const results = await Promise.all(
      Array.from({ length: 20 }, (_, i) =>
        saveVersion({ sceneId: created.scene.id, parentVersionId: parent, scene: kettleScene({ roughness: i / 40 }), message: `try ${i}`, authorId: user.id }),
      ),
    );
    const winners = results.filter((r) => r.ok);
    const conflicts = results.filter((r) => !r.ok && r.reason === "conflict");
    expect(winners).toHaveLength(1);
    expect(conflicts).toHaveLength(19);
    const winner = winners[0]!;
    if (!winner.ok) return;
    for (const c of conflicts) if (!c.ok && c.reason === "conflict") expect(c.head.id).toBe(winner.version.id);

    const versions = await listVersions(created.scene.id);
    expect(versions.map((v) => v.number)).toEqual([2, 1]);
    expect(versions[0]!.parentId).toBe(parent);
    expect((await getScene(created.scene.id))?.headVersionId).toBe(winner.version.id);
  });

  it("rejects an invalid scene with issues naming the field, and keeps the head", async () => {
    const user = await makeUser();
    const project = await makeProject(user.id);
    const created = await createScene({ projectId: project.id, name: "Kettle", scene: kettleScene(), authorId: user.id });
    if (!created.ok) throw new Error("create failed");
    const bad = kettleScene();
    (bad.lights[0]!.shape as { u: number[] }).u = [0, 0, 0];
    const r = await saveVersion({ sceneId: created.scene.id, parentVersionId: created.version.id, scene: bad, message: "broken", authorId: user.id });
    expect(r.ok).toBe(false);
    if (r.ok || r.reason !== "invalid") throw new Error("expected invalid");
    expect(r.issues.some((i) => i.path.startsWith("lights[0].shape"))).toBe(true);
    expect((await getScene(created.scene.id))?.headVersionId).toBe(created.version.id);
  });

  it("restores an old version as a new head and forks into another project with an origin link", async () => {
    const user = await makeUser();
    const project = await makeProject(user.id);
    const other = await makeProject(user.id, "Carafe studies");
    const created = await createScene({ projectId: project.id, name: "Kettle", scene: kettleScene(), authorId: user.id });
    if (!created.ok) throw new Error("create failed");
    const v2 = await saveVersion({ sceneId: created.scene.id, parentVersionId: created.version.id, scene: kettleScene({ roughness: 0.35 }), message: "rougher glaze", authorId: user.id });
    if (!v2.ok) throw new Error("save failed");
    const restored = await restoreVersion({ sceneId: created.scene.id, versionId: created.version.id, parentVersionId: v2.version.id, authorId: user.id });
    if (!restored.ok) throw new Error("restore failed");
    expect(restored.version.number).toBe(3);
    expect(restored.version.kind).toBe("restore");
    expect(restored.version.sourceVersionId).toBe(created.version.id);
    expect(restored.version.scene).toEqual(created.version.scene);

    const fork = await forkScene({ versionId: v2.version.id, targetProjectId: other.id, authorId: user.id });
    if (!fork.ok) throw new Error("fork failed");
    expect(fork.scene.projectId).toBe(other.id);
    expect(fork.version.kind).toBe("fork");
    const origin = await getForkOrigin(fork.scene);
    expect(origin?.version.id).toBe(v2.version.id);
    expect(origin?.scene.id).toBe(created.scene.id);
    expect((await listForks(created.scene.id)).map((f) => f.scene.id)).toEqual([fork.scene.id]);
  });
});

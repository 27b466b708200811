// The library's server-side query: filters by scene, author, integrator and spp range, sorts, and pages.
import { afterAll, describe, expect, it } from "vitest";
import { completeRender, createRender, listRenders, parseRenderFilters, renderFacets } from "~/models/render.server";
import { createScene } from "~/models/scene.server";
import { dbPool } from "~/services/db.server";
import { kettleScene, makeProject, makeUser } from "../support/a3-fixtures";

afterAll(async () => {
  await dbPool().end();
});

describe("listRenders", () => {
  it("filters, sorts and pages on the server", async () => {
    const [ana, ben] = [await makeUser("ana"), await makeUser("ben")];
    const project = await makeProject(ana.id);
    const kettle = await createScene({ projectId: project.id, name: "Kettle", scene: kettleScene(), authorId: ana.id });
    const carafe = await createScene({ projectId: project.id, name: "Carafe", scene: kettleScene({ name: "Carafe" }), authorId: ben.id });
    if (!kettle.ok || !carafe.ok) throw new Error("scenes");
    const specs = [
      { s: kettle, by: ana.id, spp: 16, integrator: "path" },
      { s: kettle, by: ben.id, spp: 64, integrator: "direct" },
      { s: carafe, by: ben.id, spp: 256, integrator: "path" },
      { s: carafe, by: ana.id, spp: 1024, integrator: "whitted" },
      { s: kettle, by: ana.id, spp: 4, integrator: "path" },
    ];
    for (const x of specs) {
      const r = await createRender({
        projectId: project.id,
        sceneId: x.s.scene.id,
        versionId: x.s.version.id,
        source: "pool",
        spp: x.spp,
        seed: 1,
        width: 16,
        height: 12,
        integrator: x.integrator,
        tracerVersion: "test",
        createdBy: x.by,
      });
      await completeRender(r.id, { accumulationHash: "fnv1a64:0000000000000000", renderMs: x.spp, samplesPerSecond: 1, sppDone: x.spp, files: {} });
    }
    // A render still queued is not in the library by default.
    await createRender({ projectId: project.id, sceneId: kettle.scene.id, versionId: kettle.version.id, source: "pool", spp: 8, seed: 1, width: 16, height: 12, integrator: "path", tracerVersion: "test", createdBy: ana.id });

    const all = await listRenders(project.id, { sort: "spp", dir: "asc" }, { page: 1, pageSize: 10 });
    expect(all.total).toBe(5);
    expect(all.rows.map((r) => r.spp)).toEqual([4, 16, 64, 256, 1024]);

    expect((await listRenders(project.id, { sceneId: carafe.scene.id })).rows.map((r) => r.sceneName)).toEqual(["Carafe", "Carafe"]);
    expect((await listRenders(project.id, { authorId: ben.id, sort: "spp", dir: "desc" })).rows.map((r) => r.spp)).toEqual([256, 64]);
    expect((await listRenders(project.id, { integrator: "path", minSpp: 10, maxSpp: 300, sort: "spp", dir: "asc" })).rows.map((r) => r.spp)).toEqual([16, 256]);
    expect((await listRenders(project.id, { status: "any" })).total).toBe(6);

    const page2 = await listRenders(project.id, { sort: "spp", dir: "desc" }, { page: 2, pageSize: 2 });
    expect(page2.total).toBe(5);
    expect(page2.rows.map((r) => r.spp)).toEqual([64, 16]);

    // Query strings with junk fall back to defaults instead of failing.
    expect(parseRenderFilters(new URLSearchParams("sort=bogus&minSpp=abc&sceneId=not-a-uuid"))).toMatchObject({ sort: "date", dir: "desc", minSpp: undefined, sceneId: undefined });

    const facets = await renderFacets(project.id);
    expect(facets.scenes.map((s) => s.name)).toEqual(["Carafe", "Kettle"]);
    expect(facets.integrators).toEqual(["direct", "path", "whitted"]);
  });
});

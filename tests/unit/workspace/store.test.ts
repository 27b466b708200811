import { afterEach, describe, expect, it, vi } from "vitest";
import { validateScene } from "@tracer/scene/validate";
import { createWorkspaceStore, sceneToText } from "~/stores/workspace";
import { valueAtPath } from "~/lib/workspace-json";
import { kettleScene, kettleText } from "./fixture";

function makeStore(opts: { text?: string } = {}) {
  let t = 0;
  const clock = { advance: (ms: number) => (t += ms) };
  const store = createWorkspaceStore(
    { sceneId: "s1", canEdit: true, base: { id: "v1", number: 1, text: kettleText }, text: opts.text },
    { validate: validateScene, now: () => t, coalesceMs: 1000 },
  );
  return { store, clock };
}

describe("workspace store: forms and JSON edit one text", () => {
  it("a form edit changes only that value in the JSON and keeps the layout", () => {
    const { store } = makeStore();
    store.getState().editPaths([{ path: ["lights", 0, "power"], value: 55 }], { label: "key power" });
    const s = store.getState();
    expect(valueAtPath(s.text, ["lights", 0, "power"])).toBe(55);
    // Every other line is untouched: exactly one line of the pretty-printed text differs.
    const before = kettleText.split("\n");
    const after = s.text.split("\n");
    expect(after.length).toBe(before.length);
    expect(after.filter((line, i) => line !== before[i])).toEqual(['      "power": 55,']);
    expect(s.lastGood?.scene.lights[0]).toMatchObject({ power: 55 });
  });

  it("an editor edit shows up in what the forms read (parsed) and in the last good scene", () => {
    const { store } = makeStore();
    const text = kettleText.replace('"fovY": 40', '"fovY": 28');
    store.getState().edit(text, { source: "editor", label: "typing", coalesceKey: "editor" });
    const s = store.getState();
    expect(valueAtPath(s.text, ["camera", "fovY"])).toBe(28);
    expect((s.parsed as typeof kettleScene).camera.fovY).toBe(28);
    expect(s.lastGood?.scene.camera.fovY).toBe(28);
    expect(s.issues).toEqual([]);
  });

  it("an invalid edit keeps the last good scene and names the offending path", () => {
    const { store } = makeStore();
    const bad = kettleText.replace('"radius": 0.3', '"radius": -0.3');
    store.getState().edit(bad, { source: "editor", label: "typing" });
    const s = store.getState();
    expect(s.text).toBe(bad);
    expect(s.lastGood?.text).toBe(kettleText);
    expect(s.issues.map((i) => i.path)).toContain("lights[1].shape.radius");
    expect(s.parsed).not.toBeNull(); // still JSON, so the forms can repair it
  });

  it("broken JSON syntax leaves nothing for the forms but keeps the last good scene", () => {
    const { store } = makeStore();
    store.getState().edit(kettleText.slice(0, 200), { source: "editor", label: "typing" });
    const s = store.getState();
    expect(s.parsed).toBeNull();
    expect(s.issues[0]?.path).toBe("");
    expect(s.issues[0]?.message).toMatch(/invalid JSON/);
    expect(s.lastGood?.text).toBe(kettleText);
    expect(() => s.editPaths([{ path: ["render", "spp"], value: 4 }], { label: "spp" })).toThrow(/not valid JSON/);
  });
});

describe("workspace store: one undo history over editor and forms", () => {
  it("undoes and redoes a mix of editor and form edits in order", () => {
    const { store, clock } = makeStore();
    const st = () => store.getState();
    const t1 = kettleText.replace('"spp": 16', '"spp": 64');
    st().edit(t1, { source: "editor", label: "typing", coalesceKey: "editor" });
    clock.advance(5000);
    st().editPaths([{ path: ["camera", "fovY"], value: 35 }], { label: "camera field of view", coalesceKey: "camera.fovY" });
    const t2 = st().text;
    expect(st().past.length).toBe(2);

    st().undo();
    expect(st().text).toBe(t1);
    expect(st().lastSource).toBe("history");
    st().undo();
    expect(st().text).toBe(kettleText);
    st().undo(); // nothing left: no change
    expect(st().text).toBe(kettleText);
    st().redo();
    expect(st().text).toBe(t1);
    st().redo();
    expect(st().text).toBe(t2);
    expect(st().future).toEqual([]);
  });

  it("merges quick edits with the same key (typing, dragging a value) into one undo step", () => {
    const { store, clock } = makeStore();
    const st = () => store.getState();
    for (const v of [41, 42, 43, 44]) {
      st().editPaths([{ path: ["camera", "fovY"], value: v }], { label: "fov", coalesceKey: "camera.fovY" });
      clock.advance(300);
    }
    expect(st().past.length).toBe(1);
    clock.advance(2000); // a pause starts a new step
    st().editPaths([{ path: ["camera", "fovY"], value: 50 }], { label: "fov", coalesceKey: "camera.fovY" });
    expect(st().past.length).toBe(2);
    st().undo();
    expect(valueAtPath(st().text, ["camera", "fovY"])).toBe(44);
    st().undo();
    expect(valueAtPath(st().text, ["camera", "fovY"])).toBe(40);
  });

  it("a new edit after undo drops the redo branch", () => {
    const { store } = makeStore();
    const st = () => store.getState();
    st().editPaths([{ path: ["render", "spp"], value: 32 }], { label: "spp" });
    st().undo();
    expect(st().future.length).toBe(1);
    st().editPaths([{ path: ["render", "spp"], value: 8 }], { label: "spp" });
    expect(st().future).toEqual([]);
    st().redo();
    expect(valueAtPath(st().text, ["render", "spp"])).toBe(8);
  });

  it("writing the light balance back is one undoable edit and resets the gains", () => {
    const { store } = makeStore();
    const st = () => store.getState();
    st().setBalance("key", { gain: 2 });
    st().setBalance("fill", { gain: 0.5 });
    const r = st().writeBackBalance();
    expect(r.changed).toBe(2);
    expect(valueAtPath(st().text, ["lights", 0, "power"])).toBe(80);
    expect(valueAtPath(st().text, ["lights", 1, "radiance"])).toEqual([1, 1, 1.2]);
    expect(valueAtPath(st().text, ["lights", 2, "intensity"])).toEqual([1, 0.9, 0.8]); // group "default" untouched
    expect(st().balances).toEqual({});
    expect(st().past.length).toBe(1);
    st().undo();
    expect(st().text).toBe(kettleText);
  });
});

describe("workspace store: versions", () => {
  it("keeps a restored draft's text while remembering the version it started from", () => {
    const draft = kettleText.replace('"spp": 16', '"spp": 256');
    const { store } = makeStore({ text: draft });
    expect(store.getState().text).toBe(draft);
    expect(store.getState().base.id).toBe("v1");
    expect(store.getState().lastGood?.scene.render.spp).toBe(256);
  });

  it("a broken draft still shows the base version's scene", () => {
    const { store } = makeStore({ text: "{ oops" });
    expect(store.getState().lastGood?.text).toBe(kettleText);
    expect(store.getState().issues.length).toBeGreaterThan(0);
  });

  it("saving moves the base; rebasing keeps my text; taking theirs is undoable", () => {
    const { store } = makeStore();
    const st = () => store.getState();
    st().editPaths([{ path: ["render", "spp"], value: 99 }], { label: "spp" });
    const mine = st().text;
    st().markSaved({ id: "v2", number: 2 });
    expect(st().base).toEqual({ id: "v2", number: 2, text: mine });

    const theirs = sceneToText({ ...kettleScene, name: "Wren kettle, their edit" });
    st().rebaseOnto({ id: "v3", number: 3, text: theirs });
    expect(st().text).toBe(mine);
    expect(st().base.id).toBe("v3");

    st().takeVersion({ id: "v3", number: 3, text: theirs }, "take version 3");
    expect(st().text).toBe(theirs);
    st().undo();
    expect(st().text).toBe(mine); // nothing typed is lost
    expect(st().base.id).toBe("v3");
  });
});

describe("sceneToText", () => {
  it("shows a stored scene in reading order whatever order the database returned, and keeps every value", () => {
    const shuffled = { lights: kettleScene.lights, name: kettleScene.name, camera: { fovY: 40, target: [0, 0.5, 0], position: [0, 1, 4] }, format: kettleScene.format, image: kettleScene.image, render: kettleScene.render, materials: { zinc: { roughness: 0.1, type: "metal", reflectance: [1, 1, 1] }, ash: { albedo: [0.5, 0.5, 0.5], type: "diffuse" } }, objects: [] };
    const text = sceneToText(shuffled);
    expect(JSON.parse(text)).toEqual(shuffled);
    const keys = Object.keys(JSON.parse(text) as object);
    expect(keys.slice(0, 3)).toEqual(["format", "name", "image"]);
    expect(Object.keys((JSON.parse(text) as { camera: object }).camera)).toEqual(["position", "target", "fovY"]);
    const mats = (JSON.parse(text) as { materials: Record<string, object> }).materials;
    expect(Object.keys(mats)).toEqual(["zinc", "ash"]); // the author's ids are not reordered
    expect(Object.keys(mats.zinc!)).toEqual(["type", "reflectance", "roughness"]);
  });
});

describe("sceneToText layout", () => {
  it("keeps vectors and colours on one line and round-trips exactly", () => {
    const text = sceneToText(kettleScene);
    expect(text).toContain('"center": [0, 0.5, 0]');
    expect(text).toContain('"albedo": [0.8, 0.75, 0.7]');
    expect(JSON.parse(text)).toEqual(kettleScene);
    expect(text.endsWith("}\n")).toBe(true);
  });
});

describe("combining my edits with a version saved in between", () => {
  it("keeps their change and mine when they touch different fields, matching lights by id", async () => {
    const { combineEdits } = await import("~/lib/workspace-merge");
    const base = sceneToText(kettleScene);
    const theirs = sceneToText({ ...kettleScene, camera: { ...kettleScene.camera, fovY: 32 }, lights: [...kettleScene.lights].reverse() });
    const mineScene = structuredClone(kettleScene);
    mineScene.lights[0]!.power = 120;
    const merged = combineEdits(base, sceneToText(mineScene), theirs) as typeof kettleScene;
    expect(merged.camera.fovY).toBe(32);
    expect(merged.lights.map((l) => l.id)).toEqual(["bulb", "fill", "key"]);
    expect(merged.lights.find((l) => l.id === "key")!.power).toBe(120);
    expect(validateScene(merged).ok).toBe(true);
  });

  it("lets mine win where both changed the same field", async () => {
    const { combineEdits } = await import("~/lib/workspace-merge");
    const base = sceneToText(kettleScene);
    const theirs = sceneToText({ ...kettleScene, render: { spp: 64 } });
    const mine = sceneToText({ ...kettleScene, render: { spp: 256 } });
    expect((combineEdits(base, mine, theirs) as typeof kettleScene).render.spp).toBe(256);
  });
});

describe("the forms' parse of a big scene follows typing after a pause", () => {
  function bigStore() {
    vi.useFakeTimers();
    // A threshold below the fixture's size stands in for a scene of a few hundred kilobytes.
    return createWorkspaceStore(
      { sceneId: "s1", canEdit: true, base: { id: "v1", number: 1, text: kettleText } },
      { validate: validateScene, formParseDelay: { aboveChars: 100, ms: 200 } },
    );
  }
  afterEach(() => vi.useRealTimers());

  it("typing in the editor updates the text and its check at once, the parse after the pause", () => {
    const store = bigStore();
    const before = store.getState().parsed as typeof kettleScene;
    store.getState().edit(kettleText.replace('"fovY": 40', '"fovY": 41'), { source: "editor", label: "typing", coalesceKey: "editor" });
    store.getState().edit(kettleText.replace('"fovY": 40', '"fovY": 42'), { source: "editor", label: "typing", coalesceKey: "editor" });
    expect(store.getState().parsed).toBe(before); // still the previous parse
    expect(store.getState().lastGood?.scene.camera.fovY).toBe(42); // the check does not wait
    vi.advanceTimersByTime(199);
    expect(store.getState().parsed).toBe(before);
    vi.advanceTimersByTime(1);
    const after = store.getState().parsed as typeof kettleScene;
    expect(after.camera.fovY).toBe(42);
    expect(after.lights).toBe(before.lights); // unchanged slices keep their identity
  });

  it("form edits, undo and broken JSON are parsed at once, and a pending parse cannot bring back older text", () => {
    const store = bigStore();
    store.getState().edit(kettleText.replace('"fovY": 40', '"fovY": 41'), { source: "editor", label: "typing" });
    store.getState().editPaths([{ path: ["lights", 0, "power"], value: 55 }], { label: "key power" });
    const s = store.getState().parsed as typeof kettleScene;
    expect(s.lights[0]!.power).toBe(55);
    expect(s.camera.fovY).toBe(41);
    vi.advanceTimersByTime(500);
    expect((store.getState().parsed as typeof kettleScene).lights[0]!.power).toBe(55);
    store.getState().undo();
    expect((store.getState().parsed as typeof kettleScene).lights[0]!.power).toBe(40);
    store.getState().edit(kettleText.slice(0, 120), { source: "editor", label: "typing" });
    vi.advanceTimersByTime(200);
    expect(store.getState().parsed).toBeNull();
  });

  it("small scenes are parsed on every keystroke", () => {
    const store = createWorkspaceStore({ sceneId: "s1", canEdit: true, base: { id: "v1", number: 1, text: kettleText } }, { validate: validateScene });
    store.getState().edit(kettleText.replace('"fovY": 40', '"fovY": 43'), { source: "editor", label: "typing" });
    expect((store.getState().parsed as typeof kettleScene).camera.fovY).toBe(43);
  });
});

// The workspace store with its scene check answered later (as the check worker does): every edit lands at
// once, at most one check is in flight, answers about older text are dropped, and an invalid edit keeps
// the last good scene.
import { describe, expect, it } from "vitest";
import { validateScene, type SceneResult } from "@tracer/scene/validate";
import { createWorkspaceStore } from "~/stores/workspace";
import { kettleText } from "./fixture";

/** A check whose answers the test releases by hand, in any order. */
function manualCheck() {
  const asked: { text: string; answer: (r?: SceneResult) => void; fail: (e: Error) => void }[] = [];
  const validate = (text: string) =>
    new Promise<SceneResult>((resolve, reject) => {
      asked.push({ text, answer: (r) => resolve(r ?? validateScene(text)), fail: reject });
    });
  return { asked, validate };
}

const settle = () => new Promise((r) => setTimeout(r, 0));
const withFov = (fov: number) => kettleText.replace('"fovY": 40', `"fovY": ${fov}`);
const badRadius = kettleText.replace('"radius": 0.3', '"radius": -0.3');

function makeStore(check = manualCheck(), opts: { known?: boolean; text?: string } = {}) {
  const store = createWorkspaceStore(
    {
      sceneId: "s1",
      canEdit: true,
      base: { id: "v1", number: 1, text: kettleText },
      text: opts.text,
      check: opts.known === false ? undefined : validateScene(kettleText),
    },
    { validate: check.validate },
  );
  return { store, check };
}

describe("workspace store: checks answered off the main thread", () => {
  it("starts from the server's check without asking the worker", () => {
    const { store, check } = makeStore();
    const s = store.getState();
    expect(check.asked).toEqual([]);
    expect(s.checkedRevision).toBe(s.revision);
    expect(s.lastGood?.text).toBe(kettleText);
  });

  it("asks for a check of the starting text when none is known, and takes its answer", async () => {
    const { store, check } = makeStore(manualCheck(), { known: false });
    expect(store.getState().lastGood).toBeNull();
    expect(check.asked.map((a) => a.text)).toEqual([kettleText]);
    check.asked[0]!.answer();
    await settle();
    expect(store.getState().lastGood?.text).toBe(kettleText);
    expect(store.getState().checkedRevision).toBe(store.getState().revision);
  });

  it("puts every keystroke into the text at once, keeps one check in flight and checks the newest text next", async () => {
    const { store, check } = makeStore();
    const st = () => store.getState();
    st().edit(withFov(3), { source: "editor", label: "typing", coalesceKey: "editor" });
    st().edit(withFov(32), { source: "editor", label: "typing", coalesceKey: "editor" });
    st().edit(withFov(321), { source: "editor", label: "typing", coalesceKey: "editor" });
    st().edit(withFov(32), { source: "editor", label: "typing", coalesceKey: "editor" });
    // Nothing typed waits for a check: the text and what the forms read follow at once.
    expect(st().text).toBe(withFov(32));
    expect((st().parsed as { camera: { fovY: number } }).camera.fovY).toBe(32);
    // Only the first keystroke's text went out; the rest wait for its answer.
    expect(check.asked.map((a) => a.text)).toEqual([withFov(3)]);
    expect(st().checkedRevision).not.toBe(st().revision);

    check.asked[0]!.answer(); // an answer about fovY 3: stale, dropped
    await settle();
    expect(st().lastGood?.text).toBe(kettleText);
    expect(check.asked.map((a) => a.text)).toEqual([withFov(3), withFov(32)]); // straight to the newest text

    check.asked[1]!.answer();
    await settle();
    expect(st().lastGood?.scene.camera.fovY).toBe(32);
    expect(st().checkedRevision).toBe(st().revision);
    expect(check.asked.length).toBe(2); // 4 keystrokes, 2 checks
  });

  it("an invalid edit shows its issue at the path and keeps the last good scene", async () => {
    const { store, check } = makeStore();
    store.getState().edit(badRadius, { source: "editor", label: "typing" });
    check.asked[0]!.answer();
    await settle();
    const s = store.getState();
    expect(s.text).toBe(badRadius);
    expect(s.issues.map((i) => i.path)).toContain("lights[1].shape.radius");
    expect(s.lastGood?.text).toBe(kettleText);
  });

  it("drops an answer about a text that was undone meanwhile", async () => {
    const { store, check } = makeStore();
    store.getState().edit(badRadius, { source: "editor", label: "typing" });
    store.getState().undo(); // back to the valid text before the bad one is even checked
    check.asked[0]!.answer(); // issues for the bad text: must not show
    await settle();
    expect(store.getState().issues).toEqual([]);
    expect(check.asked.map((a) => a.text)).toEqual([badRadius, kettleText]);
    check.asked[1]!.answer();
    await settle();
    expect(store.getState().issues).toEqual([]);
    expect(store.getState().checkedRevision).toBe(store.getState().revision);
  });

  it("a failing check names the problem instead of leaving the scene unchecked for ever", async () => {
    const { store, check } = makeStore();
    store.getState().edit(withFov(30), { source: "editor", label: "typing" });
    check.asked[0]!.fail(new Error("worker crashed"));
    await settle();
    expect(store.getState().issues[0]?.message).toMatch(/could not be checked: worker crashed/);
    expect(store.getState().lastGood?.text).toBe(kettleText); // the preview keeps the last good scene
  });

  it("a broken restored draft still shows the base version's scene once checked", async () => {
    const { store, check } = makeStore(manualCheck(), { known: false, text: "{ oops" });
    for (const a of check.asked) a.answer();
    await settle();
    expect(store.getState().text).toBe("{ oops");
    expect(store.getState().issues[0]?.message).toMatch(/invalid JSON/);
    expect(store.getState().lastGood?.text).toBe(kettleText);
  });

  it("refuses to write the light balance back while the current text is unchecked", async () => {
    const { store, check } = makeStore();
    store.getState().setBalance("key", { gain: 2 });
    store.getState().edit(withFov(30), { source: "editor", label: "typing" });
    expect(() => store.getState().writeBackBalance()).toThrow(/still being checked/);
    expect(store.getState().text).toBe(withFov(30)); // nothing lost
    check.asked[0]!.answer();
    await settle();
    expect(store.getState().writeBackBalance().changed).toBe(1);
    expect(store.getState().text).toContain('"power": 80');
  });
});

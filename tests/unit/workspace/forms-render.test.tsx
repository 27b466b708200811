// @vitest-environment jsdom
// Which form sections re-render for an edit, counted with React's Profiler (structural facts, no clock): a
// keystroke in one section must not re-render the others, and neither must an editor edit elsewhere.
import { act, cleanup, fireEvent, render, screen } from "@testing-library/react";
import type { ProfilerOnRenderCallback } from "react";
import { afterEach, describe, expect, it } from "vitest";
import { validateScene } from "@tracer/scene/validate";
import { WorkspaceProvider } from "~/components/workspace/context";
import { SceneForms } from "~/components/workspace/scene-forms";
import { keepUnchanged } from "~/lib/workspace-json";
import { createWorkspaceStore } from "~/stores/workspace";
import { kettleText } from "./fixture";

afterEach(cleanup);

function setup() {
  const store = createWorkspaceStore({ sceneId: "s", canEdit: true, base: { id: "v1", number: 1, text: kettleText } }, { validate: validateScene });
  const rendered = new Set<string>();
  const onRender: ProfilerOnRenderCallback = (id) => void rendered.add(id);
  render(
    <WorkspaceProvider value={store}>
      <SceneForms onSectionRender={onRender} />
    </WorkspaceProvider>,
  );
  /** The sections that rendered since the last call. */
  const take = () => {
    const out = [...rendered].sort();
    rendered.clear();
    return out;
  };
  return { store, take };
}

const SECTIONS = ["camera", "display", "light-0", "light-1", "light-2", "material-bench", "material-glaze", "render"];

describe("form sections re-render only for their own slice of the scene", () => {
  it("mounting renders every section once", () => {
    const { take } = setup();
    expect(take()).toEqual(SECTIONS);
  });

  it("typing a camera field re-renders the camera section and no light or material section", () => {
    const { store, take } = setup();
    take();
    const fov = screen.getByLabelText("camera: Vertical view (°)") as HTMLInputElement;
    for (const v of ["3", "35", "352"]) fireEvent.change(fov, { target: { value: v } });
    expect(store.getState().text).toContain('"fovY": 352');
    expect(take()).toEqual(["camera"]);
  });

  it("typing a light's power re-renders that light only", () => {
    const { take } = setup();
    take();
    fireEvent.change(screen.getByLabelText("Light key: Power (W)"), { target: { value: "41" } });
    expect(take()).toEqual(["light-0"]);
  });

  it("an editor edit of one material re-renders that material only; a change nothing reads re-renders nothing", () => {
    const { store, take } = setup();
    take();
    act(() => store.getState().edit(store.getState().text.replace(/("albedo": \[\s*)0\.8,/, "$10.6,"), { source: "editor", label: "typing" }));
    expect(store.getState().text).toMatch(/"albedo": \[\s*0\.6,/);
    expect(take()).toEqual(["material-glaze"]);
    // The scene's name has no form: changing it re-renders no section.
    act(() => store.getState().edit(store.getState().text.replace("Wren kettle, bench test", "Wren kettle, bench test 2"), { source: "editor", label: "typing" }));
    expect(take()).toEqual([]);
  });

  it("undo brings back the earlier value and re-renders only the section it touches", () => {
    const { store, take } = setup();
    fireEvent.change(screen.getByLabelText("Light fill: Radius (m)"), { target: { value: "0.4" } });
    take();
    act(() => store.getState().undo());
    expect((screen.getByLabelText("Light fill: Radius (m)") as HTMLInputElement).value).toBe("0.3");
    expect(take()).toEqual(["light-1"]);
  });

  it("after broken JSON is repaired, sections whose slice is unchanged do not re-render", () => {
    const { store, take } = setup();
    const good = store.getState().text;
    act(() => store.getState().edit(good.slice(0, 100), { source: "editor", label: "typing" }));
    expect(screen.getByText(/forms are paused/)).toBeTruthy();
    take();
    act(() => store.getState().edit(good, { source: "editor", label: "typing" }));
    // The sections mount again (they were replaced by the notice), but their slices are the same objects as before.
    expect(take()).toEqual(SECTIONS);
    act(() => store.getState().edit(good.replace('"fovY": 40', '"fovY": 41'), { source: "editor", label: "typing" }));
    expect(take()).toEqual(["camera"]);
  });
});

describe("keepUnchanged", () => {
  it("reuses equal parts of the previous value and replaces what changed", () => {
    const prev = { a: { x: [1, 2, 3] }, b: { y: 1 }, list: [{ id: "k" }, { id: "f" }] };
    const next = keepUnchanged(prev, { a: { x: [1, 2, 3] }, b: { y: 2 }, list: [{ id: "k" }, { id: "f" }] }) as typeof prev;
    expect(next).not.toBe(prev);
    expect(next.a).toBe(prev.a);
    expect(next.list).toBe(prev.list);
    expect(next.b).not.toBe(prev.b);
    expect(next.b).toEqual({ y: 2 });
    expect(keepUnchanged(prev, JSON.parse(JSON.stringify(prev)))).toBe(prev);
  });

  it("treats a change of key order, array length or kind as a change", () => {
    const prev = { m: { a: 1, b: 2 }, l: [1, 2] };
    const reordered = keepUnchanged(prev, { m: { b: 2, a: 1 }, l: [1, 2] }) as typeof prev;
    expect(Object.keys(reordered.m)).toEqual(["b", "a"]);
    expect(reordered.l).toBe(prev.l);
    const longer = keepUnchanged(prev, { m: { a: 1, b: 2 }, l: [1, 2, 3] }) as typeof prev;
    expect(longer.l).toEqual([1, 2, 3]);
    expect(longer.m).toBe(prev.m);
    expect(keepUnchanged({ l: [1] }, { l: { 0: 1 } })).toEqual({ l: { 0: 1 } });
  });

  it("keeps a literal __proto__ member as data, never as the prototype", () => {
    const prev = JSON.parse('{"__proto__": {"x": 1}, "y": 1}') as Record<string, unknown>;
    const next = keepUnchanged(prev, JSON.parse('{"__proto__": {"x": 1}, "y": 2}')) as Record<string, unknown>;
    expect(Object.getPrototypeOf(next)).toBe(Object.prototype);
    expect(Object.hasOwn(next, "__proto__")).toBe(true);
    expect(next.y).toBe(2);
  });
});

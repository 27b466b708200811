// @vitest-environment jsdom
// Which parts of the workspace re-render for a new picture or a progress message, counted with React's
// Profiler (structural facts, no clock): a picture re-renders nothing (the canvas draws it outside React),
// a progress message re-renders the progress strip only, and neither touches the forms.
import { act, cleanup, render } from "@testing-library/react";
import { Profiler, type ProfilerOnRenderCallback } from "react";
import { afterEach, beforeEach, describe, expect, it, vi } from "vitest";
import { createStore } from "zustand/vanilla";
import { validateScene } from "@tracer/scene/validate";
import { WorkspaceProvider } from "~/components/workspace/context";
import { PreviewCanvas, PreviewProvider, ProgressStrip } from "~/components/workspace/preview";
import { SceneForms } from "~/components/workspace/scene-forms";
import type { Histogram, Picture } from "~/lib/workspace-image";
import { initialPreview, type PreviewRenderer, type PreviewState } from "~/lib/workspace-render";
import { createWorkspaceStore } from "~/stores/workspace";
import { kettleText } from "./fixture";

const histogram: Histogram = { minStops: -8, maxStops: 8, counts: new Uint32Array(4), black: 0, below: 0, above: 0, total: 4, logAverage: 0, maxLuminance: 0 };
const picture = (lookSeq: number): Picture => ({ width: 4, height: 3, rgba: new Uint8ClampedArray(48), histogram, lookSeq });

beforeEach(() => {
  vi.stubGlobal("requestAnimationFrame", () => 0);
  vi.stubGlobal("cancelAnimationFrame", () => {});
  vi.stubGlobal(
    "ResizeObserver",
    class {
      observe() {}
      disconnect() {}
    },
  );
});
afterEach(() => {
  cleanup();
  vi.unstubAllGlobals();
});

function setup() {
  const store = createWorkspaceStore({ sceneId: "s", canEdit: true, base: { id: "v1", number: 1, text: kettleText } }, { validate: validateScene });
  const previewStore = createStore<PreviewState>()(() => ({ ...initialPreview, status: "rendering", sppTarget: 16, picture: picture(0) }));
  let look = 0;
  const renderer = { store: previewStore, setLook: () => ++look } as unknown as PreviewRenderer;
  const rendered = new Set<string>();
  const onRender: ProfilerOnRenderCallback = (id) => void rendered.add(id);
  // "tree" wraps everything, the provider included: React's Profiler may not report a consumer that a
  // context change re-renders when its own Profiler bails out, but such a change starts at the provider.
  render(
    <Profiler id="tree" onRender={onRender}>
      <WorkspaceProvider value={store}>
        <PreviewProvider renderer={renderer}>
          <Profiler id="canvas" onRender={onRender}>
            <PreviewCanvas />
          </Profiler>
          <Profiler id="progress" onRender={onRender}>
            <ProgressStrip onRestart={() => {}} />
          </Profiler>
          <Profiler id="forms" onRender={onRender}>
            <SceneForms />
          </Profiler>
        </PreviewProvider>
      </WorkspaceProvider>
    </Profiler>,
  );
  const take = () => {
    const out = [...rendered].sort();
    rendered.clear();
    return out;
  };
  return { previewStore, take };
}

describe("preview readers select narrow slices", () => {
  it("a new picture re-renders nothing; a progress message re-renders the progress strip only", () => {
    const { previewStore, take } = setup();
    expect(take()).toEqual(["canvas", "forms", "progress", "tree"]);
    act(() => previewStore.setState((s) => ({ picture: picture(1), pictureVersion: s.pictureVersion + 1 })));
    expect(take()).toEqual([]);
    act(() => previewStore.setState({ sppDone: 4, elapsedMs: 800, samplesPerSecond: 1000 }));
    expect(take()).toEqual(["progress", "tree"]);
    act(() => previewStore.setState((s) => ({ picture: picture(2), pictureVersion: s.pictureVersion + 1, sppDone: 8 })));
    expect(take()).toEqual(["progress", "tree"]);
  });

  it("a picture of another size re-renders the canvas (to fit it), still not the forms", () => {
    const { previewStore, take } = setup();
    take();
    act(() => previewStore.setState({ picture: { ...picture(3), width: 8, height: 6, rgba: new Uint8ClampedArray(192) } }));
    expect(take()).toEqual(["canvas", "tree"]);
  });
});

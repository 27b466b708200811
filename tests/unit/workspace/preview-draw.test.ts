// @vitest-environment jsdom
// The preview draws pictures outside React: however many pictures arrive between two animation frames, the
// canvas gets one putImageData (of the newest), and the element says which look it shows.
import { afterEach, beforeEach, describe, expect, it, vi } from "vitest";
import { createStore } from "zustand/vanilla";
import { drawPictures } from "~/components/workspace/preview";
import type { Histogram, Picture } from "~/lib/workspace-image";
import { initialPreview, type PreviewState } from "~/lib/workspace-render";

const histogram: Histogram = { minStops: -8, maxStops: 8, counts: new Uint32Array(4), black: 0, below: 0, above: 0, total: 4, logAverage: 0, maxLuminance: 0 };
const picture = (lookSeq: number, value: number, width = 2, height = 2): Picture => ({ width, height, rgba: new Uint8ClampedArray(width * height * 4).fill(value), histogram, lookSeq });

let frames: FrameRequestCallback[] = [];
const runFrame = () => {
  const due = frames;
  frames = [];
  for (const f of due) f(performance.now());
};

beforeEach(() => {
  frames = [];
  vi.stubGlobal("requestAnimationFrame", (f: FrameRequestCallback) => frames.push(f));
  vi.stubGlobal("cancelAnimationFrame", () => {});
  // jsdom has no ImageData without a canvas backend: a stand-in that keeps what it was given.
  vi.stubGlobal(
    "ImageData",
    class {
      constructor(
        readonly data: Uint8ClampedArray,
        readonly width: number,
        readonly height: number,
      ) {}
    },
  );
});
afterEach(() => vi.unstubAllGlobals());

function setup() {
  const store = createStore<PreviewState>()(() => ({ ...initialPreview }));
  const drawn: { data: Uint8ClampedArray; width: number }[] = [];
  const canvas = { width: 0, height: 0, getContext: () => ({ putImageData: (img: { data: Uint8ClampedArray; width: number }) => drawn.push(img) }) } as unknown as HTMLCanvasElement;
  const box = document.createElement("div");
  const stop = drawPictures({ store }, () => canvas, () => box);
  return { store, drawn, canvas, box, stop };
}

describe("drawing preview pictures", () => {
  it("draws only the newest of several pictures that arrive within one frame", () => {
    const { store, drawn, box } = setup();
    runFrame(); // nothing to draw yet
    expect(drawn).toHaveLength(0);
    store.setState({ picture: picture(1, 10) });
    store.setState({ picture: picture(2, 20) });
    store.setState({ picture: picture(3, 30) });
    expect(frames).toHaveLength(1); // one frame asked for, not three
    expect(drawn).toHaveLength(0); // nothing drawn outside a frame
    runFrame();
    expect(drawn.map((d) => d.data[0])).toEqual([30]);
    expect(box.getAttribute("data-look-shown")).toBe("3");
    runFrame(); // no new picture: no draw
    expect(drawn).toHaveLength(1);
  });

  it("marks the requested look at once and sizes the canvas to the picture", () => {
    const { store, canvas, box, stop } = setup();
    store.setState({ lookRequested: 4 });
    expect(box.getAttribute("data-look-requested")).toBe("4");
    store.setState({ picture: picture(4, 50, 3, 2) });
    runFrame();
    expect([canvas.width, canvas.height]).toEqual([3, 2]);
    expect(box.getAttribute("data-look-shown")).toBe("4");
    stop();
    store.setState({ picture: picture(5, 60, 3, 2), lookRequested: 5 });
    expect(frames).toHaveLength(0); // unsubscribed
    expect(box.getAttribute("data-look-requested")).toBe("4");
  });
});

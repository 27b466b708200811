/// <reference lib="webworker" />
/**
 * Checks scene text against the scene format for the workspace, off the page's main thread. A worker of
 * its own rather than the render coordinator's: a long compile there (a large mesh's BVH) must not hold
 * up the error markers while the artist types.
 */
import { expose } from "comlink";
import { validateScene, type SceneResult } from "@tracer/scene/validate";

const api = {
  /** The scene with defaults filled in, or every problem with its JSON path (and line, for text). */
  check(input: unknown): SceneResult {
    return validateScene(input);
  },
};

export type CheckApi = typeof api;

expose(api);

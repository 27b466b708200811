/**
 * The page's way to check a scene: one small worker, started on the first request, answers
 * `checkScene`. Safe to import during server rendering (nothing starts until a check is asked for, and
 * the server never asks: it sends the check of the version it loads).
 */
import { wrap, type Remote } from "comlink";
import type { SceneResult } from "@tracer/scene/validate";
import type { CheckApi } from "./workspace-check.worker";

let remote: Remote<CheckApi> | null = null;

function checker(): Remote<CheckApi> {
  if (!remote) {
    const worker = new Worker(new URL("./workspace-check.worker.ts", import.meta.url), { type: "module", name: "tracewell-scene-check" });
    remote = wrap<CheckApi>(worker);
  }
  return remote;
}

/** Start the worker ahead of the first edit, so that edit's check does not wait for the worker to load. */
export function startChecker(): void {
  checker();
}

/** Scene text, or an already parsed scene value, checked against the scene format in the worker. */
export function checkScene(input: unknown): Promise<SceneResult> {
  return checker().check(input);
}

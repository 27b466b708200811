// worker_threads entry for the scene fuzz: runs a range of cases and reports before and after each one,
// so the parent can name the case that hangs (the parent's watchdog ends this worker).
import { parentPort, workerData } from "node:worker_threads";
import { handMadeScenes, makeCase, repositoryScenes } from "./scene-mutator";
import { runCase } from "./run-case";

export type FuzzRange = { root: string; from: number; to: number };
export type FuzzMessage =
  | { type: "start"; index: number }
  | { type: "done"; index: number; base: string; mode: string; mutations: string[]; outcome: ReturnType<typeof runCase> }
  | { type: "finished"; bases: string[] };

if (!parentPort) throw new Error("fuzz-worker.ts must run inside a worker_threads Worker");
const port = parentPort;
const { root, from, to } = workerData as FuzzRange;
const bases = [...repositoryScenes(root), ...handMadeScenes()];
for (let i = from; i < to; i++) {
  port.postMessage({ type: "start", index: i } satisfies FuzzMessage);
  const c = makeCase(i, bases);
  const outcome = runCase(c);
  port.postMessage({ type: "done", index: i, base: c.base, mode: c.mode, mutations: c.mutations, outcome } satisfies FuzzMessage);
}
port.postMessage({ type: "finished", bases: bases.map((b) => b.name) } satisfies FuzzMessage);

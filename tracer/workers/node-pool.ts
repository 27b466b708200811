/**
 * Node worker pool: worker_threads running node.worker.ts through comlink's Node adapter.
 *
 * Node 20 cannot start a worker on a .ts file, even under tsx (the worker does not inherit the
 * loader hooks). When this file runs as TypeScript (tsx, vitest), each worker starts from a tiny
 * data: URL module that imports tsx's `tsImport` and loads node.worker.ts through it. A bundled
 * build (node.worker.js next to this file) is started directly.
 */
import { existsSync } from "node:fs";
import { availableParallelism } from "node:os";
import { fileURLToPath } from "node:url";
import { Worker } from "node:worker_threads";
import { wrap } from "comlink";
import nodeEndpoint from "comlink/dist/umd/node-adapter.js";
import { WorkerPool, type PoolWorker } from "./pool";
import type { TracerWorkerApi } from "./worker-api";

function startWorker(): Worker {
  const js = new URL("./node.worker.js", import.meta.url);
  if (existsSync(fileURLToPath(js))) return new Worker(js);
  const ts = new URL("./node.worker.ts", import.meta.url);
  const tsxApi = import.meta.resolve("tsx/esm/api"); // data: URLs cannot resolve bare specifiers
  const boot = `const { tsImport } = await import(${JSON.stringify(tsxApi)}); await tsImport(${JSON.stringify(ts.href)}, ${JSON.stringify(ts.href)});`;
  return new Worker(new URL("data:text/javascript," + encodeURIComponent(boot)));
}

/** Starts `size` workers (default: one per available core). Call `terminate()` when done: live workers keep the process running. */
export function createNodePool(size: number = availableParallelism()): WorkerPool {
  if (!(Number.isInteger(size) && size >= 1)) throw new Error(`createNodePool: size must be a whole number ≥ 1 (got ${size})`);
  const workers: PoolWorker[] = [];
  for (let i = 0; i < size; i++) {
    const worker = startWorker();
    workers.push({ api: wrap<TracerWorkerApi>(nodeEndpoint(worker)), terminate: () => worker.terminate() });
  }
  return new WorkerPool(workers);
}

/**
 * Browser worker pool: module Web Workers built by Vite from browser.worker.ts. Import this only
 * from client code (a route component or a clientLoader), never during server rendering.
 */
import { wrap } from "comlink";
import { WorkerPool, type PoolWorker } from "./pool";
import type { TracerWorkerApi } from "./worker-api";

/** Starts `size` workers (default: navigator.hardwareConcurrency, at least 1). */
export function createBrowserPool(size?: number): WorkerPool {
  const n = size ?? Math.max(1, navigator.hardwareConcurrency || 1);
  const workers: PoolWorker[] = [];
  for (let i = 0; i < n; i++) {
    // The literal `new Worker(new URL(...), { type: "module" })` form is what Vite detects and bundles.
    const worker = new Worker(new URL("./browser.worker.ts", import.meta.url), { type: "module", name: `tracer-${i}` });
    workers.push({ api: wrap<TracerWorkerApi>(worker), terminate: () => worker.terminate() });
  }
  return new WorkerPool(workers);
}

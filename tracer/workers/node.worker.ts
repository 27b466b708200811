// worker_threads entry: the shared tracer worker API over comlink's Node adapter.
import { parentPort } from "node:worker_threads";
import { expose } from "comlink";
import nodeEndpoint from "comlink/dist/umd/node-adapter.js";
import { createWorkerApi } from "./worker-api";

if (!parentPort) throw new Error("node.worker.ts must run inside a worker_threads Worker");
expose(createWorkerApi(), nodeEndpoint(parentPort));

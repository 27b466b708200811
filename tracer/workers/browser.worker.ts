/// <reference lib="webworker" />
// Module Web Worker entry (bundled by Vite): the shared tracer worker API over comlink.
import { expose } from "comlink";
import { createWorkerApi } from "./worker-api";

expose(createWorkerApi());

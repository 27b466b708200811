// Public API of the tracer: re-exports only.
export * from "./scene/schema";
export * from "./scene/validate";
export * from "./scene/limits";
export * from "./scene/assets";
export * from "./version";
export * from "./compile/types";
export { compileScene, transferables, CompileError, type LoadedAssets } from "./compile/compile";
export { renderUnit, createRenderScratch, pixelJitter, type RenderScratch } from "./render/unit";
export * from "./film/accumulate";
export * from "./render/meter";

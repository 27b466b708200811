// Public API of the tracer: re-exports only.
export * from "./scene/schema";
export * from "./scene/validate";
export * from "./scene/limits";
export * from "./scene/assets";
export * from "./scene/json-schema";
export { parseJsonWithPositions, JsonTextError, type TextPosition, type PathSegment } from "./scene/json-text";
export * from "./geometry/obj";
export * from "./io/image";
export * from "./io/rgbe";
export * from "./io/pfm";
export * from "./io/png";
export * from "./film/display";
export * from "./version";
export * from "./compile/types";
export { compileScene, transferables, CompileError, type LoadedAssets } from "./compile/compile";
export { renderUnit, createRenderScratch, pixelJitter, type RenderScratch } from "./render/unit";
export * from "./film/accumulate";
export * from "./render/meter";

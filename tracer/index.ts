// Public API of the tracer: re-exports only.
export * from "./scene/schema";
export * from "./scene/validate";
export * from "./scene/limits";
export * from "./scene/assets";

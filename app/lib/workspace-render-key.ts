/** The part of a scene that changes the rendered radiance (everything but the display block). */
export function renderKey(scene: unknown): string {
  if (!scene || typeof scene !== "object") return "";
  const { display: _display, ...rest } = scene as Record<string, unknown>;
  return JSON.stringify(rest);
}

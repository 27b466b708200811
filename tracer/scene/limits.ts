/**
 * Hard ceilings that keep one bad scene from exhausting a browser tab or a shared render machine.
 * They are checked with the same path-named messages as the rest of the schema; raising one is a
 * deliberate product decision (memory per pixel grows with the number of light groups).
 */
export const LIMITS = {
  /** Width and height, each. */
  maxImageSide: 8192,
  /** width × height. The accumulation keeps 3 float64 per pixel per light group, so 16.8 Mpx ≈ 400 MB per group. */
  maxImagePixels: 16_777_216,
  maxSpp: 65_536,
  maxDepth: 64,
  maxMaterials: 1_000,
  maxObjects: 10_000,
  maxLights: 1_000,
  /** Distinct light groups (each costs a full radiance buffer). */
  maxLightGroups: 16,
  /** Triangles summed over every mesh object of the scene. */
  maxTriangles: 4_000_000,
  /** Bytes of one asset file (mesh or environment map). */
  maxAssetBytes: 128 * 1024 * 1024,
  /** width × height of an environment map. */
  maxMapPixels: 8192 * 4096,
  maxNameLength: 200,
  maxNotesLength: 20_000,
} as const;

export type Limits = typeof LIMITS;

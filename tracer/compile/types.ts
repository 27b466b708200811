/**
 * The compiled scene: plain numbers and typed arrays only (no class instances, no closures), so it can be
 * structured-cloned or transferred to workers once and read by monomorphic hot loops.
 */
import type { Bvh } from "../bvh/layout";

export const INTEGRATOR_PATH = 0;
export const INTEGRATOR_WHITTED = 1;
export const INTEGRATOR_DIRECT = 2;

// Primitive kinds (primInfo word 0).
export const PRIM_TRIANGLE = 0;
export const PRIM_SPHERE = 1;
export const PRIM_RECT = 2;
export const PRIM_DISK = 3;

/**
 * primInfo: PRIM_INFO_STRIDE int32 per primitive:
 *   0 kind, 1 material index (-1 for a light's emitter), 2 light index (-1 for an object),
 *   3 motion index into `velocities` (-1 = static), 4 offset of this triangle's 9 corner normals in
 *   `normals` (-1 = none)
 */
export const PRIM_INFO_STRIDE = 5;
/**
 * primGeom: PRIM_GEOM_STRIDE float32 per primitive (positions at shutter time 0):
 *   triangle: v0 (0..2), e1 = v1 − v0 (3..5), e2 = v2 − v0 (6..8)
 *   sphere:   centre (0..2), radius (3)
 *   rect:     corner p0 = centre − u/2 − v/2 (0..2), u (3..5), v (6..8), w = (u×v)/|u×v|² (9..11)
 *   disk:     centre (0..2), unit normal (3..5), radius (6)
 */
export const PRIM_GEOM_STRIDE = 12;

// Light kinds (lights word 0).
export const LIGHT_RECT = 0;
export const LIGHT_DISK = 1;
export const LIGHT_SPHERE = 2;
export const LIGHT_POINT = 3;
/**
 * lights: LIGHT_STRIDE float64 per light:
 *   0 kind, 1 group index, 2 visible (1/0), 3..5 radiance (area) or intensity (point), 6 area,
 *   7..9 position (rect corner p0 / disk centre / sphere centre / point position), 10..12 rect u,
 *   13..15 rect v, 16..18 unit front normal (rect, disk), 19 radius (disk, sphere),
 *   20 probability of choosing this light for next-event estimation, 21 its primitive index (-1 if it
 *   has none: point lights and invisible lights)
 */
export const LIGHT_STRIDE = 22;

// Environment kinds.
export const ENV_NONE = 0;
export const ENV_UNIFORM = 1;
export const ENV_SKY = 2;
export const ENV_MAP = 3;

/**
 * camera: CAMERA_STRIDE float64:
 *   0..2 eye, 3..5 right × tan(fovY/2) × aspect, 6..8 up × tan(fovY/2), 9..11 unit forward,
 *   12 lens radius, 13 focus distance, 14 shutter open, 15 shutter close, 16..18 unit right, 19..21 unit up
 */
export const CAMERA_STRIDE = 22;

export type CompiledScene = {
  tracerVersion: string;
  width: number;
  height: number;
  spp: number;
  seed: number;
  maxDepth: number;
  integrator: number;
  /** per-sample radiance clamp (0 = off) */
  clamp: number;
  /** one radiance buffer per group; the beauty image is their sum */
  groupNames: string[];
  camera: Float64Array;

  primCount: number;
  primInfo: Int32Array;
  primGeom: Float32Array;
  /** 9 floats (3 corner normals) per triangle that has vertex normals */
  normals: Float32Array;
  /** 3 floats per moving object: translation per unit shutter time */
  velocities: Float32Array;

  materials: Float64Array;
  materialCount: number;
  /** index of an extra white Lambertian material (albedo 1) used by the light meter */
  meterMaterial: number;

  lights: Float64Array;
  lightCount: number;
  /** cumulative light-choice probabilities: lightCdf[i] = Σ_{j<i} p_j (lightCount + 1 entries; the rest up to 1 is the environment's) */
  lightCdf: Float64Array;

  envType: number;
  /** uniform: radiance 0..2; sky: zenith 0..2, horizon 3..5, ground 6..8; map: scale 0, cos(rotY) 1, sin(rotY) 2 */
  envParams: Float64Array;
  envGroup: number;
  /** probability of choosing the environment for next-event estimation (0 if it cannot be sampled) */
  envPick: number;
  /** equirectangular map, RGB float per pixel, row 0 = top (+Y) */
  envMap: Float32Array;
  envWidth: number;
  envHeight: number;
  /** marginal CDF over rows (envHeight + 1 entries) */
  envMarginal: Float64Array;
  /** conditional CDF per row ((envWidth + 1) entries per row) */
  envConditional: Float64Array;
  /** luminance·sinθ per pixel, the piecewise-constant sampling density before normalisation */
  envFunc: Float32Array;
  /** mean of envFunc over all pixels (normalises the pdf) */
  envFuncMean: number;

  /** bounding sphere of all geometry (for ray offsets and the environment's power estimate) */
  sceneCenter: Float64Array;
  sceneRadius: number;
  /** ray-origin offset scale for this scene */
  rayEpsilon: number;

  bvh: Bvh;
};

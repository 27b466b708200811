/**
 * Scene → CompiledScene: flat typed arrays for the render loops, a BVH over every primitive, light and
 * environment sampling tables. Runs once per scene (allocation and gl-matrix are fine here).
 */
import { mat3, mat4, vec3 } from "gl-matrix";
import type { Scene, Shape, Material, Light } from "../scene/schema";
import { LIMITS } from "../scene/limits";
import { parseObj, ObjError } from "../geometry/obj";
import { decodeHdr } from "../io/rgbe";
import { buildBvh } from "../bvh/build";
import { bvhTransferables } from "../bvh/layout";
import { compileCamera } from "../camera";
import { TRACER_VERSION } from "../version";
import { luminance } from "../math/sampling";
import { MATERIAL_STRIDE, MAT_DIFFUSE, MAT_GLASS, MAT_METAL } from "../materials/bsdf";
import { buildEnvDistribution } from "../lights/environment";
import {
  type CompiledScene,
  ENV_MAP,
  ENV_NONE,
  ENV_SKY,
  ENV_UNIFORM,
  INTEGRATOR_DIRECT,
  INTEGRATOR_PATH,
  INTEGRATOR_WHITTED,
  LIGHT_DISK,
  LIGHT_POINT,
  LIGHT_RECT,
  LIGHT_SPHERE,
  LIGHT_STRIDE,
  PRIM_DISK,
  PRIM_GEOM_STRIDE,
  PRIM_INFO_STRIDE,
  PRIM_RECT,
  PRIM_SPHERE,
  PRIM_TRIANGLE,
} from "./types";

/** Asset bytes by the exact ref string used in the scene. */
export type LoadedAssets = Map<string, Uint8Array>;

/** A compile failure that names the scene path it concerns (same style as validation issues). */
export class CompileError extends Error {
  readonly path: string;
  constructor(path: string, message: string) {
    super(`${path}: ${message}`);
    this.name = "CompileError";
    this.path = path;
  }
}

/** Share of the light-choice probability spread uniformly over all lights, so a light whose power estimate is small but which sits close to the surface is never starved (common practice). */
const UNIFORM_PICK_SHARE = 0.1;

class PrimBuilder {
  kinds: number[] = [];
  info: number[] = [];
  geom: number[] = [];
  normals: number[] = [];
  count = 0;
  add(kind: number, material: number, light: number, motion: number, normalOffset: number, g: ArrayLike<number>): void {
    this.info.push(kind, material, light, motion, normalOffset);
    for (let i = 0; i < PRIM_GEOM_STRIDE; i++) this.geom.push(i < g.length ? g[i] : 0);
    this.count++;
  }
}

function sub(a: readonly number[], b: readonly number[]): [number, number, number] {
  return [a[0] - b[0], a[1] - b[1], a[2] - b[2]];
}
function cross(a: readonly number[], b: readonly number[]): [number, number, number] {
  return [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
}
function len(a: readonly number[]): number {
  return Math.hypot(a[0], a[1], a[2]);
}

/** Rect record: corner, u, v, w = (u×v)/|u×v|². */
function rectGeom(center: readonly number[], u: readonly number[], v: readonly number[]): number[] {
  const n = cross(u, v);
  const n2 = n[0] * n[0] + n[1] * n[1] + n[2] * n[2];
  const p0 = [center[0] - u[0] / 2 - v[0] / 2, center[1] - u[1] / 2 - v[1] / 2, center[2] - u[2] / 2 - v[2] / 2];
  return [...p0, ...u, ...v, n[0] / n2, n[1] / n2, n[2] / n2];
}

function diskGeom(center: readonly number[], normal: readonly number[], radius: number): number[] {
  const l = len(normal);
  return [center[0], center[1], center[2], normal[0] / l, normal[1] / l, normal[2] / l, radius];
}

function materialRecord(m: Material): number[] {
  if (m.type === "diffuse") return [MAT_DIFFUSE, m.albedo[0], m.albedo[1], m.albedo[2]];
  if (m.type === "metal") return [MAT_METAL, m.reflectance[0], m.reflectance[1], m.reflectance[2], m.roughness * m.roughness];
  return [MAT_GLASS, m.ior, m.roughness * m.roughness, m.absorption[0], m.absorption[1], m.absorption[2]];
}

function shapeArea(shape: Extract<Shape, { type: "rect" | "disk" | "sphere" }>): number {
  if (shape.type === "rect") return len(cross(shape.u, shape.v));
  if (shape.type === "disk") return Math.PI * shape.radius * shape.radius;
  return 4 * Math.PI * shape.radius * shape.radius;
}

function lightRadiance(l: Extract<Light, { type: "area" }>, area: number): [number, number, number] {
  if (l.radiance !== undefined) return [l.radiance[0], l.radiance[1], l.radiance[2]];
  const p = l.power ?? 0;
  const k = 1 / (Math.PI * area);
  if (typeof p === "number") return [p * k, p * k, p * k];
  return [p[0] * k, p[1] * k, p[2] * k];
}

function decodeText(bytes: Uint8Array): string {
  return new TextDecoder("utf-8").decode(bytes);
}

export function compileScene(scene: Scene, assets: LoadedAssets = new Map()): CompiledScene {
  const width = scene.image.width;
  const height = scene.image.height;

  // --- materials
  const materialIds = Object.keys(scene.materials);
  const materialIndex = new Map<string, number>();
  const materials = new Float64Array((materialIds.length + 1) * MATERIAL_STRIDE);
  materialIds.forEach((id, i) => {
    materialIndex.set(id, i);
    materials.set(materialRecord(scene.materials[id]), i * MATERIAL_STRIDE);
  });
  const meterMaterial = materialIds.length;
  materials.set([MAT_DIFFUSE, 1, 1, 1], meterMaterial * MATERIAL_STRIDE);

  // --- groups: lights' groups in order of first appearance, then the environment
  const groupNames: string[] = [];
  const groupOf = (name: string): number => {
    let i = groupNames.indexOf(name);
    if (i < 0) {
      groupNames.push(name);
      i = groupNames.length - 1;
    }
    return i;
  };
  for (const l of scene.lights) groupOf(l.group);
  const env = scene.environment;
  const envGroup = env ? groupOf("environment") : -1;
  if (groupNames.length === 0) groupNames.push("default");
  if (groupNames.length > LIMITS.maxLightGroups) {
    throw new CompileError("lights", `uses ${groupNames.length} light groups; at most ${LIMITS.maxLightGroups} are allowed`);
  }

  // --- primitives
  const prims = new PrimBuilder();
  const velocities: number[] = [];
  let triangles = 0;
  scene.objects.forEach((obj, oi) => {
    const path = `objects[${oi}]`;
    const mi = materialIndex.get(obj.material);
    if (mi === undefined) throw new CompileError(`${path}.material`, `no material "${obj.material}" in materials`);
    let motion = -1;
    if (obj.motion && (obj.motion.velocity[0] !== 0 || obj.motion.velocity[1] !== 0 || obj.motion.velocity[2] !== 0)) {
      motion = velocities.length / 3;
      velocities.push(obj.motion.velocity[0], obj.motion.velocity[1], obj.motion.velocity[2]);
    }
    const shape = obj.shape;
    switch (shape.type) {
      case "sphere":
        prims.add(PRIM_SPHERE, mi, -1, motion, -1, [shape.center[0], shape.center[1], shape.center[2], shape.radius]);
        break;
      case "rect":
        prims.add(PRIM_RECT, mi, -1, motion, -1, rectGeom(shape.center, shape.u, shape.v));
        break;
      case "disk":
        prims.add(PRIM_DISK, mi, -1, motion, -1, diskGeom(shape.center, shape.normal, shape.radius));
        break;
      case "box": {
        const [x0, y0, z0] = shape.min;
        const [x1, y1, z1] = shape.max;
        const cx = (x0 + x1) / 2, cy = (y0 + y1) / 2, cz = (z0 + z1) / 2;
        const sx = x1 - x0, sy = y1 - y0, sz = z1 - z0;
        // six faces with u × v pointing outward (the inside of a glass box is then well defined)
        const faces: [number[], number[], number[]][] = [
          [[x1, cy, cz], [0, sy, 0], [0, 0, sz]],
          [[x0, cy, cz], [0, 0, sz], [0, sy, 0]],
          [[cx, y1, cz], [0, 0, sz], [sx, 0, 0]],
          [[cx, y0, cz], [sx, 0, 0], [0, 0, sz]],
          [[cx, cy, z1], [sx, 0, 0], [0, sy, 0]],
          [[cx, cy, z0], [0, sy, 0], [sx, 0, 0]],
        ];
        for (const [c, u, v] of faces) prims.add(PRIM_RECT, mi, -1, motion, -1, rectGeom(c, u, v));
        break;
      }
      case "mesh": {
        const bytes = assets.get(shape.asset);
        if (!bytes) throw new CompileError(`${path}.shape.asset`, `asset "${shape.asset}" was not loaded`);
        let mesh;
        try {
          mesh = parseObj(decodeText(bytes), { maxTriangles: LIMITS.maxTriangles - triangles });
        } catch (e) {
          if (e instanceof ObjError) throw new CompileError(`${path}.shape.asset`, `${shape.asset} ${e.message}`);
          throw e;
        }
        const sc = typeof shape.scale === "number" ? [shape.scale, shape.scale, shape.scale] : shape.scale;
        // scale → rotate about X, then Y, then Z (degrees) → translate
        const m = mat4.create();
        mat4.translate(m, m, shape.translate as unknown as vec3);
        mat4.rotateZ(m, m, (shape.rotate[2] * Math.PI) / 180);
        mat4.rotateY(m, m, (shape.rotate[1] * Math.PI) / 180);
        mat4.rotateX(m, m, (shape.rotate[0] * Math.PI) / 180);
        mat4.scale(m, m, sc as unknown as vec3);
        const nm = mat3.normalFromMat4(mat3.create(), m);
        const P = mesh.positions;
        const vcount = P.length / 3;
        const W = new Float64Array(P.length);
        const tmp = vec3.create();
        for (let i = 0; i < vcount; i++) {
          vec3.set(tmp, P[i * 3], P[i * 3 + 1], P[i * 3 + 2]);
          vec3.transformMat4(tmp, tmp, m);
          W[i * 3] = tmp[0];
          W[i * 3 + 1] = tmp[1];
          W[i * 3 + 2] = tmp[2];
        }
        const I = mesh.indices;
        const N = mesh.normals;
        const tn = vec3.create();
        for (let t = 0; t < I.length / 3; t++) {
          const a = I[t * 3] * 3, b = I[t * 3 + 1] * 3, c = I[t * 3 + 2] * 3;
          const g = [
            W[a], W[a + 1], W[a + 2],
            W[b] - W[a], W[b + 1] - W[a + 1], W[b + 2] - W[a + 2],
            W[c] - W[a], W[c + 1] - W[a + 1], W[c + 2] - W[a + 2],
          ];
          let no = -1;
          if (N && nm) {
            no = prims.normals.length;
            for (let k = 0; k < 3; k++) {
              vec3.set(tn, N[t * 9 + k * 3], N[t * 9 + k * 3 + 1], N[t * 9 + k * 3 + 2]);
              vec3.transformMat3(tn, tn, nm);
              vec3.normalize(tn, tn);
              prims.normals.push(tn[0], tn[1], tn[2]);
            }
          }
          prims.add(PRIM_TRIANGLE, mi, -1, motion, no, g);
        }
        triangles += I.length / 3;
        if (triangles > LIMITS.maxTriangles) {
          throw new CompileError(`${path}.shape.asset`, `the scene has more than ${LIMITS.maxTriangles} triangles`);
        }
        break;
      }
    }
  });

  // --- lights
  const lightCount = scene.lights.length;
  const lights = new Float64Array(Math.max(1, lightCount) * LIGHT_STRIDE);
  const lightPower: number[] = [];
  scene.lights.forEach((l, li) => {
    const o = li * LIGHT_STRIDE;
    lights[o + 1] = groupOf(l.group);
    if (l.type === "point") {
      lights[o] = LIGHT_POINT;
      lights[o + 2] = 0;
      lights[o + 21] = -1;
      lights.set(l.intensity, o + 3);
      lights.set(l.position, o + 7);
      lightPower.push(4 * Math.PI * luminance(l.intensity[0], l.intensity[1], l.intensity[2]));
      return;
    }
    const shape = l.shape;
    const area = shapeArea(shape);
    const rad = lightRadiance(l, area);
    lights[o + 2] = l.visible ? 1 : 0;
    lights.set(rad, o + 3);
    lights[o + 6] = area;
    let geom: number[];
    let kind: number;
    if (shape.type === "rect") {
      kind = PRIM_RECT;
      geom = rectGeom(shape.center, shape.u, shape.v);
      lights[o] = LIGHT_RECT;
      lights.set(geom.slice(0, 9), o + 7);
      const n = cross(shape.u, shape.v);
      const nl = len(n);
      lights.set([n[0] / nl, n[1] / nl, n[2] / nl], o + 16);
    } else if (shape.type === "disk") {
      kind = PRIM_DISK;
      geom = diskGeom(shape.center, shape.normal, shape.radius);
      lights[o] = LIGHT_DISK;
      lights.set(shape.center, o + 7);
      lights.set(geom.slice(3, 6), o + 16);
      lights[o + 19] = shape.radius;
    } else {
      kind = PRIM_SPHERE;
      geom = [shape.center[0], shape.center[1], shape.center[2], shape.radius];
      lights[o] = LIGHT_SPHERE;
      lights.set(shape.center, o + 7);
      lights[o + 19] = shape.radius;
    }
    // Visible lights are surfaces rays can hit; invisible ones exist only for next-event estimation.
    lights[o + 21] = -1;
    if (l.visible) {
      lights[o + 21] = prims.count;
      prims.add(kind, -1, li, -1, -1, geom);
    }
    lightPower.push(Math.PI * area * luminance(rad[0], rad[1], rad[2]));
  });

  // --- bounds (swept over the shutter interval for moving primitives) and scene extent
  const primCount = prims.count;
  const primInfo = Int32Array.from(prims.info);
  const primGeom = Float32Array.from(prims.geom);
  const vel = Float32Array.from(velocities);
  const bounds = new Float32Array(primCount * 6);
  const [t0, t1] = scene.camera.shutter;
  const lo = [Infinity, Infinity, Infinity];
  const hi = [-Infinity, -Infinity, -Infinity];
  const b = new Float64Array(6);
  for (let p = 0; p < primCount; p++) {
    primBounds(primInfo[p * PRIM_INFO_STRIDE], primGeom, p * PRIM_GEOM_STRIDE, b);
    const m = primInfo[p * PRIM_INFO_STRIDE + 3];
    if (m >= 0) {
      for (let k = 0; k < 3; k++) {
        const a = vel[m * 3 + k] * t0;
        const c = vel[m * 3 + k] * t1;
        b[k] += Math.min(a, c);
        b[k + 3] += Math.max(a, c);
      }
    }
    for (let k = 0; k < 3; k++) {
      // widen by a float32 ulp or two so rounding to float32 never shrinks a box
      const pad = 1e-6 * Math.max(Math.abs(b[k]), Math.abs(b[k + 3])) + 1e-9;
      bounds[p * 6 + k] = b[k] - pad;
      bounds[p * 6 + k + 3] = b[k + 3] + pad;
      lo[k] = Math.min(lo[k], b[k]);
      hi[k] = Math.max(hi[k], b[k + 3]);
    }
  }
  for (let li = 0; li < lightCount; li++) {
    const o = li * LIGHT_STRIDE;
    if (lights[o] === LIGHT_POINT) {
      for (let k = 0; k < 3; k++) {
        lo[k] = Math.min(lo[k], lights[o + 7 + k]);
        hi[k] = Math.max(hi[k], lights[o + 7 + k]);
      }
    }
  }
  const sceneCenter = new Float64Array(3);
  let sceneRadius = 1;
  if (lo[0] <= hi[0]) {
    for (let k = 0; k < 3; k++) sceneCenter[k] = (lo[k] + hi[k]) / 2;
    sceneRadius = Math.max(1e-6, Math.hypot(hi[0] - lo[0], hi[1] - lo[1], hi[2] - lo[2]) / 2);
  }
  const extent = sceneRadius + Math.max(Math.abs(sceneCenter[0]), Math.abs(sceneCenter[1]), Math.abs(sceneCenter[2]));
  // Offsets of spawned rays: float32 geometry carries ~6e-8 relative error, intersection in float64 a
  // little more; 1e-5 of the scene's extent clears it with margin (common practice).
  const rayEpsilon = 1e-5 * extent;

  // --- environment
  let envType = ENV_NONE;
  const envParams = new Float64Array(12);
  let envMap: Float32Array = new Float32Array(0);
  let envWidth = 0;
  let envHeight = 0;
  let envMarginal: Float64Array = new Float64Array(0);
  let envConditional: Float64Array = new Float64Array(0);
  let envFunc: Float32Array = new Float32Array(0);
  let envFuncMean = 0;
  let envMeanLum = 0;
  if (env) {
    if (env.type === "uniform") {
      envType = ENV_UNIFORM;
      envParams.set(env.radiance, 0);
      envMeanLum = luminance(env.radiance[0], env.radiance[1], env.radiance[2]);
    } else if (env.type === "sky") {
      envType = ENV_SKY;
      envParams.set(env.zenith, 0);
      envParams.set(env.horizon, 3);
      envParams.set(env.ground, 6);
      const up = (luminance(...env.zenith) + luminance(...env.horizon)) / 2;
      envMeanLum = (up + luminance(...env.ground)) / 2;
    } else {
      envType = ENV_MAP;
      const bytes = assets.get(env.asset);
      if (!bytes) throw new CompileError("environment.asset", `asset "${env.asset}" was not loaded`);
      let img;
      try {
        img = decodeHdr(bytes, { maxPixels: LIMITS.maxMapPixels });
      } catch (e) {
        throw new CompileError("environment.asset", `${env.asset}: ${e instanceof Error ? e.message : String(e)}`);
      }
      if (img.width * img.height > LIMITS.maxMapPixels) {
        throw new CompileError("environment.asset", `map of ${img.width}×${img.height} exceeds ${LIMITS.maxMapPixels} pixels`);
      }
      envMap = img.data;
      envWidth = img.width;
      envHeight = img.height;
      const rot = (env.rotationY * Math.PI) / 180;
      envParams[0] = env.scale;
      envParams[1] = Math.cos(rot);
      envParams[2] = Math.sin(rot);
      const dist = buildEnvDistribution(envMap, envWidth, envHeight);
      envMarginal = dist.marginal;
      envConditional = dist.conditional;
      envFunc = dist.func;
      envFuncMean = dist.funcMean;
      envMeanLum = dist.meanLuminance * env.scale;
    }
  }
  const envSampleable = envType === ENV_UNIFORM || envType === ENV_SKY || (envType === ENV_MAP && envFuncMean > 0 && envParams[0] > 0);

  // --- light-choice probabilities: proportional to estimated power, mixed with a uniform share
  const candidates = lightCount + (envSampleable ? 1 : 0);
  const powers = lightPower.slice();
  // environment power through the scene's bounding disc: π · L̄ · π R²
  if (envSampleable) powers.push(Math.PI * envMeanLum * Math.PI * sceneRadius * sceneRadius);
  const totalPower = powers.reduce((a, x) => a + Math.max(0, x), 0);
  const probs = powers.map((pw) =>
    totalPower > 0 ? (1 - UNIFORM_PICK_SHARE) * (Math.max(0, pw) / totalPower) + UNIFORM_PICK_SHARE / candidates : 1 / candidates,
  );
  const lightCdf = new Float64Array(lightCount + 1);
  for (let li = 0; li < lightCount; li++) {
    lights[li * LIGHT_STRIDE + 20] = probs[li];
    lightCdf[li + 1] = lightCdf[li] + probs[li];
  }
  const envPick = envSampleable ? probs[lightCount] : 0;

  const bvh = buildBvh(bounds);

  const integrator =
    scene.render.integrator === "whitted" ? INTEGRATOR_WHITTED : scene.render.integrator === "direct" ? INTEGRATOR_DIRECT : INTEGRATOR_PATH;

  return {
    tracerVersion: TRACER_VERSION,
    width,
    height,
    spp: scene.render.spp,
    seed: scene.render.seed >>> 0,
    maxDepth: integrator === INTEGRATOR_DIRECT ? 1 : scene.render.maxDepth,
    integrator,
    clamp: scene.render.clamp,
    groupNames,
    camera: compileCamera(scene.camera, width, height),
    primCount,
    primInfo,
    primGeom,
    normals: Float32Array.from(prims.normals),
    velocities: vel,
    materials,
    materialCount: materialIds.length,
    meterMaterial,
    lights,
    lightCount,
    lightCdf,
    envType,
    envParams,
    envGroup: envGroup < 0 ? 0 : envGroup,
    envPick,
    envMap,
    envWidth,
    envHeight,
    envMarginal,
    envConditional,
    envFunc,
    envFuncMean,
    sceneCenter,
    sceneRadius,
    rayEpsilon,
    bvh,
  };
}

/** Bounds of one primitive at time 0 into out (minx, miny, minz, maxx, maxy, maxz). */
function primBounds(kind: number, g: Float32Array, o: number, out: Float64Array): void {
  if (kind === PRIM_SPHERE) {
    const r = g[o + 3];
    for (let k = 0; k < 3; k++) {
      out[k] = g[o + k] - r;
      out[k + 3] = g[o + k] + r;
    }
    return;
  }
  if (kind === PRIM_DISK) {
    const r = g[o + 6];
    for (let k = 0; k < 3; k++) {
      // extent of a disk along axis k: r · sqrt(1 − n_k²)
      const n = g[o + 3 + k];
      const e = r * Math.sqrt(Math.max(0, 1 - n * n));
      out[k] = g[o + k] - e;
      out[k + 3] = g[o + k] + e;
    }
    return;
  }
  // triangle (v0, e1, e2) and rect (p0, u, v): corners p0, p0+a, p0+b (+ p0+a+b for rects)
  for (let k = 0; k < 3; k++) {
    const p = g[o + k];
    const a = g[o + 3 + k];
    const c = g[o + 6 + k];
    let mn = Math.min(p, p + a, p + c);
    let mx = Math.max(p, p + a, p + c);
    if (kind === PRIM_RECT) {
      mn = Math.min(mn, p + a + c);
      mx = Math.max(mx, p + a + c);
    }
    out[k] = mn;
    out[k + 3] = mx;
  }
}

/** Every ArrayBuffer of a compiled scene, for postMessage transfer lists. */
export function transferables(c: CompiledScene): ArrayBuffer[] {
  const list: ArrayBuffer[] = [];
  const add = (a: { buffer: ArrayBufferLike }) => {
    const buf = a.buffer;
    if (buf instanceof ArrayBuffer && !list.includes(buf)) list.push(buf);
  };
  for (const a of [
    c.camera, c.primInfo, c.primGeom, c.normals, c.velocities, c.materials, c.lights, c.lightCdf, c.envParams, c.envMap,
    c.envMarginal, c.envConditional, c.envFunc, c.sceneCenter,
  ]) add(a);
  for (const b of bvhTransferables(c.bvh)) if (!list.includes(b)) list.push(b);
  return list;
}

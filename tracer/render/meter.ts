/**
 * Light meter: irradiance at the first surface under a pixel's centre, for the workspace. The surface is
 * replaced by a white Lambertian reflector (albedo 1) and its reflected radiance Lo estimated with the
 * scene's integrator (next-event estimation + BSDF sampling with MIS, so small lights converge quickly);
 * for a white Lambertian surface Lo = E/π, so E = π·Lo. The normal faces the camera.
 */
import type { CompiledScene } from "../compile/types";
import { SALT_METER, SampleStream } from "../math/rng";
import { generateRay } from "../camera";
import { PathScratch, radiance } from "../integrators/path";
import { traceRay, surfaceAt } from "../geometry/intersect";

export type IrradianceReading = {
  hit: boolean;
  position: [number, number, number];
  normal: [number, number, number];
  /** W/m² per channel (scene radiance units × sr) */
  irradiance: [number, number, number];
  /** standard error of each irradiance channel */
  stdError: [number, number, number];
};

export function measureIrradiance(compiled: CompiledScene, px: number, py: number, samples: number, seed: number): IrradianceReading {
  const W = compiled.width;
  const H = compiled.height;
  if (!(px >= 0 && px < W && py >= 0 && py < H)) throw new Error(`measureIrradiance: pixel (${px}, ${py}) is outside the ${W}×${H} image`);
  if (!(Number.isInteger(samples) && samples >= 1 && samples <= 1 << 20)) throw new Error("measureIrradiance: samples must be an integer 1…1048576");
  const sc = new PathScratch(compiled.groupNames.length);
  const lens = new Float64Array(2);
  const cx = Math.floor(px) + 0.5;
  const cy = Math.floor(py) + 0.5;
  // pixel centre through the lens centre at shutter open
  generateRay(compiled.camera, W, H, new Float64Array([cx, cy, 0.5, 0.5, 0]), lens, sc.ray);
  const probe = sc.ray;
  const ox = probe.ox, oy = probe.oy, oz = probe.oz, dx = probe.dx, dy = probe.dy, dz = probe.dz, time = probe.time;
  const none: IrradianceReading = { hit: false, position: [0, 0, 0], normal: [0, 0, 0], irradiance: [0, 0, 0], stdError: [0, 0, 0] };
  if (!traceRay(compiled, probe, sc.hit, sc.trace, false)) return none;
  surfaceAt(compiled, probe, sc.hit);
  const h = sc.hit;
  const flip = h.ngx * dx + h.ngy * dy + h.ngz * dz > 0 ? -1 : 1;
  const position: [number, number, number] = [h.px, h.py, h.pz];
  const normal: [number, number, number] = [h.ngx * flip, h.ngy * flip, h.ngz * flip];

  const rng = new SampleStream();
  const pixel = Math.floor(py) * W + Math.floor(px);
  const sum = [0, 0, 0];
  const sum2 = [0, 0, 0];
  const G = compiled.groupNames.length;
  for (let i = 0; i < samples; i++) {
    rng.start((seed ^ SALT_METER) >>> 0, pixel, i);
    const r = sc.ray;
    r.ox = ox;
    r.oy = oy;
    r.oz = oz;
    r.dx = dx;
    r.dy = dy;
    r.dz = dz;
    r.time = time;
    r.tmax = Infinity;
    radiance(compiled, sc, rng, true);
    for (let c = 0; c < 3; c++) {
      let v = 0;
      for (let g = 0; g < G; g++) v += sc.groups[g * 3 + c];
      if (!Number.isFinite(v)) v = 0;
      const e = Math.PI * v;
      sum[c] += e;
      sum2[c] += e * e;
    }
  }
  const irradiance: [number, number, number] = [0, 0, 0];
  const stdError: [number, number, number] = [0, 0, 0];
  for (let c = 0; c < 3; c++) {
    const mean = sum[c] / samples;
    irradiance[c] = mean;
    const variance = samples > 1 ? Math.max(0, (sum2[c] - samples * mean * mean) / (samples - 1)) : 0;
    stdError[c] = Math.sqrt(variance / samples);
  }
  return { hit: true, position, normal, irradiance, stdError };
}

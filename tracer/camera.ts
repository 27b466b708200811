/**
 * Pinhole and thin-lens camera. The basis is built once with gl-matrix; `generateRay` is the per-sample hot
 * path and only reads the flat camera record (layout in compile/types.ts).
 */
import { vec3 } from "gl-matrix";
import type { Camera } from "./scene/schema";
import { CAMERA_STRIDE } from "./compile/types";
import { concentricDisk } from "./math/sampling";
import type { Ray } from "./geometry/intersect";

export function compileCamera(cam: Camera, width: number, height: number): Float64Array {
  const eye = vec3.fromValues(cam.position[0], cam.position[1], cam.position[2]);
  const target = vec3.fromValues(cam.target[0], cam.target[1], cam.target[2]);
  const upHint = vec3.fromValues(cam.up[0], cam.up[1], cam.up[2]);
  const forward = vec3.sub(vec3.create(), target, eye);
  const targetDistance = vec3.length(forward);
  vec3.normalize(forward, forward);
  // Right-handed: right = forward × up, so +X of the image is the camera's right.
  const right = vec3.normalize(vec3.create(), vec3.cross(vec3.create(), forward, upHint));
  const up = vec3.cross(vec3.create(), right, forward);
  const tanHalf = Math.tan(((cam.fovY * Math.PI) / 180) / 2);
  const aspect = width / height;
  const c = new Float64Array(CAMERA_STRIDE);
  c.set(eye, 0);
  for (let k = 0; k < 3; k++) {
    c[3 + k] = right[k] * tanHalf * aspect;
    c[6 + k] = up[k] * tanHalf;
    c[9 + k] = forward[k];
    c[16 + k] = right[k];
    c[19 + k] = up[k];
  }
  c[12] = cam.aperture;
  c[13] = cam.focusDistance ?? targetDistance;
  c[14] = cam.shutter[0];
  c[15] = cam.shutter[1];
  return c;
}

/** Length of a camera sample: film x, film y (pixels), lens u, lens v, shutter u. */
export const CAMERA_SAMPLE_LENGTH = 5;

/**
 * Ray through film position (cs[0], cs[1]) in pixels (0,0 = top-left corner of the image), lens sample
 * (cs[2], cs[3]) and shutter sample cs[4]. Writes a unit direction. The sample comes in one array, not as
 * five arguments: V8 does not inline this into the render loop and would box each double argument.
 */
export function generateRay(c: Float64Array, width: number, height: number, cs: Float64Array, lens: Float64Array, ray: Ray): void {
  const fx = cs[0], fy = cs[1], u1 = cs[2], u2 = cs[3], ut = cs[4];
  const sx = (2 * fx) / width - 1;
  const sy = 1 - (2 * fy) / height;
  // direction to the point on the plane at unit distance along forward
  let dx = c[9] + sx * c[3] + sy * c[6];
  let dy = c[10] + sx * c[4] + sy * c[7];
  let dz = c[11] + sx * c[5] + sy * c[8];
  let ox = c[0];
  let oy = c[1];
  let oz = c[2];
  const lensRadius = c[12];
  if (lensRadius > 0) {
    const fd = c[13];
    const px = ox + dx * fd;
    const py = oy + dy * fd;
    const pz = oz + dz * fd;
    concentricDisk(u1, u2, lens);
    const lx = lens[0] * lensRadius;
    const ly = lens[1] * lensRadius;
    ox += lx * c[16] + ly * c[19];
    oy += lx * c[17] + ly * c[20];
    oz += lx * c[18] + ly * c[21];
    dx = px - ox;
    dy = py - oy;
    dz = pz - oz;
  }
  const inv = 1 / Math.sqrt(dx * dx + dy * dy + dz * dz);
  ray.ox = ox;
  ray.oy = oy;
  ray.oz = oz;
  ray.dx = dx * inv;
  ray.dy = dy * inv;
  ray.dz = dz * inv;
  ray.tmax = Infinity;
  ray.time = c[14] + ut * (c[15] - c[14]);
}

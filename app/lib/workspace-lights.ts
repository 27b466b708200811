/**
 * Light arithmetic the forms need: emitter areas, switching a light between radiance and power without
 * changing how bright it is (radiance = power / (π · area), scene format 1), and default shapes and
 * materials when an author switches a type in a form.
 */
export type V3 = [number, number, number];

const isV3 = (v: unknown): v is V3 => Array.isArray(v) && v.length === 3 && v.every((x) => typeof x === "number" && Number.isFinite(x));

/** Emitting area in m² of a light shape as written in the JSON; null if the shape is incomplete. */
export function emitterArea(shape: unknown): number | null {
  if (!shape || typeof shape !== "object") return null;
  const s = shape as Record<string, unknown>;
  if (s.type === "rect" && isV3(s.u) && isV3(s.v)) {
    const [ux, uy, uz] = s.u;
    const [vx, vy, vz] = s.v;
    return Math.hypot(uy * vz - uz * vy, uz * vx - ux * vz, ux * vy - uy * vx);
  }
  if (s.type === "disk" && typeof s.radius === "number") return Math.PI * s.radius * s.radius;
  if (s.type === "sphere" && typeof s.radius === "number") return 4 * Math.PI * s.radius * s.radius;
  return null;
}

const tidy = (x: number) => (x === 0 ? 0 : Number(x.toPrecision(6)));

/** Power (W, per channel) that gives the same emission as `radiance` on `area` m². */
export function radianceToPower(radiance: V3, area: number): V3 | number {
  const p = radiance.map((r) => tidy(r * Math.PI * area)) as V3;
  return p[0] === p[1] && p[1] === p[2] ? p[0] : p;
}

/** Radiance that `power` W (number or per channel) gives on `area` m². */
export function powerToRadiance(power: number | V3, area: number): V3 {
  const p: V3 = typeof power === "number" ? [power, power, power] : power;
  return p.map((w) => tidy(w / (Math.PI * area))) as V3;
}

export function defaultLightShape(type: "rect" | "disk" | "sphere", center: V3, size: number): Record<string, unknown> {
  const s = tidy(size);
  if (type === "rect") return { type, center, u: [s, 0, 0], v: [0, 0, s] };
  if (type === "disk") return { type, center, normal: [0, -1, 0], radius: tidy(s / 2) };
  return { type, center, radius: tidy(s / 2) };
}

/** A representative size of a shape (edge, diameter) to carry across a type switch. */
export function shapeSize(shape: unknown): number {
  if (!shape || typeof shape !== "object") return 0.5;
  const s = shape as Record<string, unknown>;
  if (typeof s.radius === "number") return 2 * s.radius;
  if (isV3(s.u)) return Math.hypot(...s.u) || 0.5;
  return 0.5;
}

export function shapeCenter(shape: unknown): V3 {
  const c = shape && typeof shape === "object" ? (shape as Record<string, unknown>).center : undefined;
  return isV3(c) ? c : [0, 1, 0];
}

export function defaultMaterial(type: "diffuse" | "metal" | "glass"): Record<string, unknown> {
  if (type === "diffuse") return { type, albedo: [0.7, 0.7, 0.7] };
  if (type === "metal") return { type, reflectance: [0.9, 0.9, 0.9], roughness: 0.2 };
  return { type, ior: 1.5, roughness: 0, absorption: [0, 0, 0] };
}

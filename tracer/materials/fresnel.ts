/**
 * Fresnel reflectance and Snell refraction for a smooth dielectric interface, and the Schlick-style tint
 * used by metals.
 */

/**
 * Exact unpolarised Fresnel reflectance R = (Rs + Rp)/2 of a dielectric interface (Fresnel equations, e.g.
 * Hecht, "Optics", section on the Fresnel equations). `cosI` is the cosine between the incident direction
 * (pointing away from the surface) and the normal on the side of the medium with index n1; `eta` = n2/n1
 * measured for a direction on the normal's side. A negative cosI means the direction is on the other side,
 * so the roles of the media swap. Returns 1 under total internal reflection.
 */
export function fresnelDielectric(cosI: number, eta: number): number {
  if (cosI < 0) {
    eta = 1 / eta;
    cosI = -cosI;
  }
  if (cosI > 1) cosI = 1;
  const sin2I = 1 - cosI * cosI;
  const sin2T = sin2I / (eta * eta);
  if (sin2T >= 1) return 1 + 0 * cosI; // 1, as a double (see ggx.ts: constant returns make V8 box)
  const cosT = Math.sqrt(1 - sin2T);
  // rs with n1 = 1, n2 = eta (scale-free): (n1 cosI − n2 cosT)/(n1 cosI + n2 cosT)
  const rs = (cosI - eta * cosT) / (cosI + eta * cosT);
  // rp: (n2 cosI − n1 cosT)/(n2 cosI + n1 cosT)
  const rp = (eta * cosI - cosT) / (eta * cosI + cosT);
  return 0.5 * (rs * rs + rp * rp);
}

/** Separate s and p reflectances (for tests and diagnostics); out[0] = Rs, out[1] = Rp. */
export function fresnelDielectricSP(cosI: number, eta: number, out: Float64Array): void {
  if (cosI < 0) {
    eta = 1 / eta;
    cosI = -cosI;
  }
  const sin2T = (1 - cosI * cosI) / (eta * eta);
  if (sin2T >= 1) {
    out[0] = 1;
    out[1] = 1;
    return;
  }
  const cosT = Math.sqrt(1 - sin2T);
  const rs = (cosI - eta * cosT) / (cosI + eta * cosT);
  const rp = (eta * cosI - cosT) / (eta * cosI + cosT);
  out[0] = rs * rs;
  out[1] = rp * rp;
}

/**
 * Length of refract's record: [0..2] direction w, [3..5] normal n, [6] eta (in); [7..9] transmitted
 * direction, [10] effective eta or 0 (out).
 */
export const REFRACT_LENGTH = 11;

/**
 * Refract direction w (pointing away from the surface) through a surface with normal n (unit) and relative
 * index eta = n_{other side}/n_{w side} measured for the normal's side; pbrt's sign-flipping convention.
 * Reads w, n and eta from the record q and writes the transmitted direction (pointing away on the other
 * side) and the effective eta (n_t/n_i) used, or 0 on total internal reflection. One record in and out,
 * not eight doubles in and one out: V8 does not always inline this into the glass lobes and then boxes
 * every double argument and result.
 */
export function refract(q: Float64Array): void {
  const wx = q[0], wy = q[1], wz = q[2];
  let nx = q[3], ny = q[4], nz = q[5];
  let eta = q[6];
  let cosI = nx * wx + ny * wy + nz * wz;
  if (cosI < 0) {
    eta = 1 / eta;
    cosI = -cosI;
    nx = -nx;
    ny = -ny;
    nz = -nz;
  }
  const sin2I = Math.max(0, 1 - cosI * cosI);
  const sin2T = sin2I / (eta * eta);
  if (sin2T >= 1) {
    q[10] = 0;
    return;
  }
  const cosT = Math.sqrt(1 - sin2T);
  const k = cosI / eta - cosT;
  q[7] = -wx / eta + k * nx;
  q[8] = -wy / eta + k * ny;
  q[9] = -wz / eta + k * nz;
  q[10] = eta;
}

/** Schlick's approximation R0 + (1 − R0)(1 − cosθ)^5 (Schlick, Computer Graphics Forum 13(3), 1994). */
export function schlick(r0: number, cos: number): number {
  const m = 1 - cos;
  const m2 = m * m;
  return r0 + (1 - r0) * m2 * m2 * m;
}

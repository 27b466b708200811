/**
 * Sampling warps from [0,1)² to directions and points, and the MIS weight. Each writes into a caller-owned
 * Float64Array so hot loops never allocate.
 */

export const PI = Math.PI;
export const INV_PI = 1 / Math.PI;
export const TWO_PI = 2 * Math.PI;
export const INV_FOUR_PI = 1 / (4 * Math.PI);

/** Concentric map of the square onto the unit disk (Shirley & Chiu, "A Low Distortion Map Between Disk and Square", JGT 1997). */
export function concentricDisk(u1: number, u2: number, out: Float64Array): void {
  const a = 2 * u1 - 1;
  const b = 2 * u2 - 1;
  if (a === 0 && b === 0) {
    out[0] = 0;
    out[1] = 0;
    return;
  }
  let r: number;
  let phi: number;
  if (Math.abs(a) > Math.abs(b)) {
    r = a;
    phi = (PI / 4) * (b / a);
  } else {
    r = b;
    phi = PI / 2 - (PI / 4) * (a / b);
  }
  out[0] = r * Math.cos(phi);
  out[1] = r * Math.sin(phi);
}

/** Cosine-weighted hemisphere about +z (Malley's method: a uniform disk point projected up); pdf = cosθ/π. */
export function cosineHemisphere(u1: number, u2: number, out: Float64Array): void {
  concentricDisk(u1, u2, out);
  const x = out[0];
  const y = out[1];
  out[2] = Math.sqrt(Math.max(0, 1 - x * x - y * y));
}

/** Uniform direction on the unit sphere; pdf = 1/(4π). */
export function uniformSphere(u1: number, u2: number, out: Float64Array): void {
  const z = 1 - 2 * u1;
  const r = Math.sqrt(Math.max(0, 1 - z * z));
  const phi = TWO_PI * u2;
  out[0] = r * Math.cos(phi);
  out[1] = r * Math.sin(phi);
  out[2] = z;
}

/**
 * Uniform direction inside the cone of half-angle θmax about +z, given 1 − cosθmax (passed directly so
 * tiny cones keep their precision). pdf = 1 / (2π (1 − cosθmax)).
 */
export function uniformCone(u1: number, u2: number, oneMinusCosMax: number, out: Float64Array): void {
  const oneMinusCos = u1 * oneMinusCosMax;
  const cos = 1 - oneMinusCos;
  const sin = Math.sqrt(Math.max(0, oneMinusCos * (2 - oneMinusCos)));
  const phi = TWO_PI * u2;
  out[0] = sin * Math.cos(phi);
  out[1] = sin * Math.sin(phi);
  out[2] = cos;
}

/** Uniform point on a triangle's barycentric domain (returns b1, b2). */
export function uniformTriangle(u1: number, u2: number, out: Float64Array): void {
  const su = Math.sqrt(u1);
  out[0] = 1 - su;
  out[1] = u2 * su;
}

/**
 * Power heuristic with β = 2 for one sample from each of two techniques (Veach & Guibas, "Optimally
 * Combining Sampling Techniques for Monte Carlo Rendering", SIGGRAPH 1995): the weight of technique A
 * with pdfs w[0] (A) and w[1] (B), written to w[2]. Through an array, with no call inside, because V8 may
 * leave a call in the path loop un-inlined and then boxes its double arguments and result per sample.
 */
export function powerHeuristic(w: Float64Array): void {
  const pdfA = w[0], pdfB = w[1];
  const a = pdfA * pdfA;
  const b = pdfB * pdfB;
  const s = a + b;
  w[2] = a === Infinity ? 1 : s > 0 ? a / s : 0;
}

/**
 * Orthonormal basis (t, b) around unit n, written as [tx,ty,tz,bx,by,bz] into out
 * (Duff et al., "Building an Orthonormal Basis, Revisited", JCGT 6(1), 2017).
 */
export function basisFromNormal(nx: number, ny: number, nz: number, out: Float64Array): void {
  const sign = nz >= 0 ? 1 : -1;
  const a = -1 / (sign + nz);
  const b = nx * ny * a;
  out[0] = 1 + sign * nx * nx * a;
  out[1] = sign * b;
  out[2] = -sign * nx;
  out[3] = b;
  out[4] = sign + ny * ny * a;
  out[5] = -ny;
}

/** Rec. 709 / sRGB relative luminance of linear RGB (ITU-R BT.709). */
export function luminance(r: number, g: number, b: number): number {
  return 0.2126 * r + 0.7152 * g + 0.0722 * b;
}

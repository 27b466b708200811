/**
 * GGX (Trowbridge–Reitz) microfacet distribution with Smith masking, in the local frame where the macro
 * normal is +z (Walter, Marschner, Li & Torrance, "Microfacet Models for Refraction through Rough
 * Surfaces", EGSR 2007; height-correlated masking–shadowing from Heitz, "Understanding the
 * Masking-Shadowing Function in Microfacet-Based BRDFs", JCGT 3(2), 2014). Roughness maps to alpha as
 * alpha = roughness² (the scene format's convention).
 */

/** Below this alpha a lobe is treated as a perfect specular (delta) lobe: the GGX peak is too sharp to sample robustly in float64. */
export const MIN_ALPHA = 1e-3;

/** D(m) for a microfacet normal with cosine mz to the macro normal (0 on the back side). */
export function ggxD(mz: number, alpha: number): number {
  const a2 = alpha * alpha;
  const c2 = mz * mz;
  const t = c2 * (a2 - 1) + 1;
  const d = a2 / (Math.PI * t * t);
  // 0 written as 0·d, not the literal 0: V8 kept a result merging an integer literal with computed doubles
  // as a tagged value and boxed each double it returned (measured with the allocation probe).
  return mz > 0 ? d : 0 * d;
}

/** Smith Λ(w) for a direction with cosine z to the macro normal. */
export function ggxLambda(z: number, alpha: number): number {
  const c2 = z * z;
  // tan²θ clamped at 0 for |z| ≥ 1 (Λ = 0) and ∞ at z = 0 (Λ = ∞)
  const tan2 = Math.max(0, (1 - c2) / c2);
  return 0.5 * (-1 + Math.sqrt(1 + alpha * alpha * tan2));
}

/** Smith G1 = 1/(1 + Λ). */
export function ggxG1(z: number, alpha: number): number {
  return 1 / (1 + ggxLambda(z, alpha));
}

/** Height-correlated G2 = 1/(1 + Λ(o) + Λ(i)). */
export function ggxG2(zo: number, zi: number, alpha: number): number {
  return 1 / (1 + ggxLambda(zo, alpha) + ggxLambda(zi, alpha));
}

/**
 * Sample a microfacet normal with density D(m)·cosθm (θm = atan(α√(u/(1−u)))), written to out[0..2];
 * returns its pdf D(m)·cosθm.
 */
export function ggxSampleNormal(u1: number, u2: number, alpha: number, out: Float64Array): number {
  const t2 = (alpha * alpha * u1) / Math.max(1e-300, 1 - u1);
  const cos = 1 / Math.sqrt(1 + t2);
  const sin = Math.sqrt(Math.max(0, 1 - cos * cos));
  const phi = 2 * Math.PI * u2;
  out[0] = sin * Math.cos(phi);
  out[1] = sin * Math.sin(phi);
  out[2] = cos;
  return ggxD(cos, alpha) * cos;
}

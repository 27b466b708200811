/**
 * Counter-based random numbers: every number used while rendering is a pure function of
 * (scene seed, pixel index, pass index, dimension index), so any subset of passes of any tile can be computed
 * on any worker in any order and give bit-identical results.
 *
 * Generator: the `pcg4d` hash of Jarzynski & Olano, "Hash Functions for GPU Rendering", Journal of Computer
 * Graphics Techniques 9(3), 2020. It maps four 32-bit inputs to four well-mixed 32-bit outputs; we feed it
 * (pixel, pass, dimension block, seed) and use the four outputs as four consecutive dimensions.
 *
 * Pixel jitter uses multi-jittered sampling (Chiu, Shirley & Wang, "Multi-Jittered Sampling", Graphics
 * Gems IV, 1994): each pass of a pixel lands in its own cell of an m×k grid and in its own 1/n strip along
 * x and along y. The random permutations come from the hash-based `permute` of Kensler ("Correlated
 * Multi-Jittered Sampling", Pixar Technical Memo 13-01, 2013), so any single pass is computed without the
 * others. (Kensler's *correlated* variant shares one permutation across rows; it converges more slowly on
 * smooth integrands, so every row and column here gets its own.)
 *
 * pcg4d mixes low input bits thoroughly but high bits less so, so the streams reserved for purposes other
 * than path sampling are separated through the seed lane with salts whose low bits differ.
 */

const TWO_NEG_32 = 2.3283064365386963e-10; // 2^-32: maps a uint32 onto [0, 1) (largest value 1 - 2^-32 < 1)

/** Seed salts of the reserved streams (arbitrary odd constants with well-mixed low bits). */
export const SALT_PIXEL_PATTERN = 0x85ebca6b;
export const SALT_QUANTISE = 0xc2b2ae35;
export const SALT_METER = 0x27d4eb2f;

/** pcg4d over (a, b, c, d); writes four uint32 outputs to out[0..3]. */
export function pcg4d(a: number, b: number, c: number, d: number, out: Uint32Array): void {
  // v = v * 1664525u + 1013904223u  (the LCG step of the paper)
  let x = (Math.imul(a, 1664525) + 1013904223) >>> 0;
  let y = (Math.imul(b, 1664525) + 1013904223) >>> 0;
  let z = (Math.imul(c, 1664525) + 1013904223) >>> 0;
  let w = (Math.imul(d, 1664525) + 1013904223) >>> 0;
  x = (x + Math.imul(y, w)) >>> 0;
  y = (y + Math.imul(z, x)) >>> 0;
  z = (z + Math.imul(x, y)) >>> 0;
  w = (w + Math.imul(y, z)) >>> 0;
  x = (x ^ (x >>> 16)) >>> 0;
  y = (y ^ (y >>> 16)) >>> 0;
  z = (z ^ (z >>> 16)) >>> 0;
  w = (w ^ (w >>> 16)) >>> 0;
  x = (x + Math.imul(y, w)) >>> 0;
  y = (y + Math.imul(z, x)) >>> 0;
  z = (z + Math.imul(x, y)) >>> 0;
  w = (w + Math.imul(y, z)) >>> 0;
  out[0] = x;
  out[1] = y;
  out[2] = z;
  out[3] = w;
}

/**
 * The random numbers of one (seed, pixel, pass) sample. `seek(d)` positions it at dimension d; `next()`
 * returns dimension d in [0, 1) and advances. Reused for every sample (no allocation per sample).
 */
export class SampleStream {
  // Kept as int32 (`| 0`): pcg4d reads its inputs as 32-bit words either way, and an int32 is never boxed
  // when passed to a call V8 does not inline, where a uint32 ≥ 2^31 would be.
  private seed = 0;
  private pixel = 0;
  private pass = 0;
  private dim = 0;
  private block = -1;
  private readonly words = new Uint32Array(4);
  private readonly single = new Float64Array(1);

  start(seed: number, pixel: number, pass: number): void {
    this.seed = seed | 0;
    this.pixel = pixel | 0;
    this.pass = pass | 0;
    this.dim = 0;
    this.block = -1;
  }

  seek(dim: number): void {
    this.dim = dim;
  }

  /** Dimension d in [0, 1), then advances (for tests and tools; the render loop uses nextInto). */
  next(): number {
    this.nextInto(this.single, 0);
    return this.single[0];
  }

  /**
   * Writes dimension d to out[at] and advances: the form the render loop uses, since a double returned
   * from a call V8 does not inline is boxed on the heap.
   */
  nextInto(out: Float64Array, at: number): void {
    const d = this.dim++;
    const b = d >>> 2;
    if (b !== this.block) {
      pcg4d(this.pixel, this.pass, b, this.seed, this.words);
      this.block = b;
    }
    out[at] = this.words[d & 3] * TWO_NEG_32;
  }

  /** Four raw uint32 words of the reserved stream `salt` for this (pixel, pass); does not move the stream. */
  reserved(salt: number, out: Uint32Array): void {
    pcg4d(this.pixel, this.pass, 0, this.seed ^ salt, out);
  }
}

/** Uniform value in [0, 1) for dimension `dim` of sample (seed, pixel, pass), without a stream object. */
export function sampleAt(seed: number, pixel: number, pass: number, dim: number, scratch: Uint32Array): number {
  pcg4d(pixel >>> 0, pass >>> 0, dim >>> 2, seed >>> 0, scratch);
  return scratch[dim & 3] * TWO_NEG_32;
}

// ---------------------------------------------------------------------------------------------------------
// Correlated multi-jittered sampling (Kensler 2013). `permute` is a hash-based bijection of [0, l) chosen by
// pattern p (cycle-walking keeps it inside [0, l)); `randfloat` a hashed jitter in [0, 1).

export function permute(i: number, l: number, p: number): number {
  let w = l - 1;
  w |= w >>> 1;
  w |= w >>> 2;
  w |= w >>> 4;
  w |= w >>> 8;
  w |= w >>> 16;
  w >>>= 0;
  p >>>= 0;
  i >>>= 0;
  do {
    i ^= p;
    i = Math.imul(i, 0xe170893d);
    i ^= p >>> 16;
    i ^= (i & w) >>> 4;
    i ^= p >>> 8;
    i = Math.imul(i, 0x0929eb3f);
    i ^= p >>> 23;
    i ^= (i & w) >>> 1;
    i = Math.imul(i, 1 | (p >>> 27));
    i = Math.imul(i, 0x6935fa69);
    i ^= (i & w) >>> 11;
    i = Math.imul(i, 0x74dcb303);
    i ^= (i & w) >>> 2;
    i = Math.imul(i, 0x9e501cc3);
    i ^= (i & w) >>> 2;
    i = Math.imul(i, 0xc860a3df);
    i &= w;
    i ^= i >>> 5;
    i >>>= 0;
  } while (i >= l);
  return (i + p) % l;
}

export function randfloat(i: number, p: number): number {
  return (randbits(i, p) >>> 0) * TWO_NEG_32;
}

/** The 32 hashed bits behind randfloat, as an int32 (never boxed when returned from a call that is not inlined). */
function randbits(i: number, p: number): number {
  i = (i ^ p) >>> 0;
  i ^= i >>> 17;
  i ^= i >>> 10;
  i = Math.imul(i, 0xb36534e5);
  i ^= i >>> 12;
  i ^= i >>> 21;
  i = Math.imul(i, 0x93fc4795);
  i ^= 0xdf6e307f;
  i ^= i >>> 17;
  i = Math.imul(i, 1 | (p >>> 18));
  return i | 0;
}

/** Grid of a pattern of n samples: m columns × k rows with m·k ≥ n. */
export function cmjGrid(n: number): { m: number; k: number } {
  const m = Math.max(1, Math.ceil(Math.sqrt(n)));
  const k = Math.max(1, Math.ceil(n / m));
  return { m, k };
}

/**
 * Sample s (0 ≤ s < n) of the 2-D multi-jittered pattern p over an m×k grid (m·k ≥ n). The sample index is
 * first permuted over all m·k cells, so with n < m·k each sample is still uniform over the square (no bias)
 * while the samples of one pattern stay in distinct cells. Writes x, y in [0, 1) to out[0], out[1].
 * The multipliers deriving sub-pattern ids are arbitrary odd constants (any keeps `permute` bijective).
 */
export function cmj(s: number, m: number, k: number, p: number, out: Float64Array): void {
  // Hash inputs as int32 (`| 0`): the hashes read 32-bit words either way (see SampleStream).
  s = permute(s, m * k, Math.imul(p, 0x51633e2d) | 0);
  const col = s % m;
  const row = (s - col) / m;
  // the sub-column of cell (col, row) is a permutation over the rows of that column, and the sub-row a
  // permutation over the columns of that row: every x strip and every y strip of width 1/(m·k) holds one sample
  const subRow = permute(col, m, Math.imul(p, 0x68bc21eb) ^ Math.imul(row + 1, 0x9e3779b9));
  const subCol = permute(row, k, Math.imul(p, 0x02e5be93) ^ Math.imul(col + 1, 0x7feb352d));
  const jx = (randbits(s, Math.imul(p, 0x967a889b)) >>> 0) * TWO_NEG_32;
  const jy = (randbits(s, Math.imul(p, 0x368cc8b7)) >>> 0) * TWO_NEG_32;
  let x = (col + (subCol + jx) / k) / m;
  let y = (row + (subRow + jy) / m) / k;
  // guard the open interval against rounding up to exactly 1
  if (x >= 1) x = 0.9999999999999999;
  if (y >= 1) y = 0.9999999999999999;
  out[0] = x;
  out[1] = y;
}

/**
 * Hostile and broken asset files: the OBJ and Radiance .hdr readers (and PFM, which holds stored render
 * state) get truncated files, random bytes, flipped bytes, absurd header sizes, out-of-range indices,
 * non-finite coordinates and run-length overruns. Each must either decode to finite, in-range data or
 * fail with the reader's own error naming the line (OBJ) or the byte (images) — never a RangeError or a
 * TypeError — and memory must stay bounded: every typed array a reader allocates is recorded by a spy on
 * the typed-array constructors, and none may be sized by an untrusted header beyond what the limits and
 * the file's own length allow.
 */
import { afterEach, describe, expect, it } from "vitest";
import seedrandom from "seedrandom";
import { decodeHdr, encodeHdr, readHdrSize } from "../../../tracer/io/rgbe";
import { decodePfm, encodePfm } from "../../../tracer/io/pfm";
import { ImageFormatError, type FloatImage } from "../../../tracer/io/image";
import { ObjError, parseObj } from "../../../tracer/geometry/obj";
import { LIMITS } from "../../../tracer/scene/limits";
import { inspectAsset } from "../../../app/lib/asset-inspect";
import { makeLightboxHdr, PEBBLE_OBJ } from "./fuzz/scene-mutator";

const enc = new TextEncoder();
const dec = new TextDecoder("utf-8");

// ---------------------------------------------------------------------------------------------
// allocation spy

type TypedCtor = Float32ArrayConstructor | Float64ArrayConstructor | Uint8ArrayConstructor | Int32ArrayConstructor | Uint32ArrayConstructor;
const SPIED = ["Float32Array", "Float64Array", "Int32Array", "Uint32Array"] as const;
const originals = new Map<string, TypedCtor>();

/**
 * Runs fn with the typed-array constructors replaced by subclasses that record the byte size of every
 * allocation made from a length (the readers allocate their outputs with `new Float32Array(n)` etc.).
 * Returns the largest allocation in bytes. Uint8Array is left alone: the input itself is one.
 */
function largestAllocation(fn: () => void): { bytes: number; error: unknown } {
  let largest = 0;
  for (const name of SPIED) {
    const Base = globalThis[name] as unknown as TypedCtor;
    originals.set(name, Base);
    const Spy = class extends (Base as Float32ArrayConstructor) {
      constructor(...args: unknown[]) {
        if (typeof args[0] === "number") largest = Math.max(largest, args[0] * (Base as Float32ArrayConstructor).BYTES_PER_ELEMENT);
        super(...(args as [number]));
      }
    };
    Object.defineProperty(globalThis, name, { value: Spy, configurable: true, writable: true });
  }
  let error: unknown = null;
  try {
    fn();
  } catch (e) {
    error = e;
  } finally {
    restore();
  }
  return { bytes: largest, error };
}

function restore(): void {
  for (const [name, ctor] of originals) Object.defineProperty(globalThis, name, { value: ctor, configurable: true, writable: true });
  originals.clear();
}
afterEach(restore);

// ---------------------------------------------------------------------------------------------
// oracles

function lineCount(text: string): number {
  return text.split(/\r\n|\n|\r/).length;
}

/** null when parseObj behaved: a sound mesh, or an ObjError naming a line of the file. */
function objProblem(text: string, maxTriangles?: number): string | null {
  try {
    const m = parseObj(text, maxTriangles === undefined ? {} : { maxTriangles });
    const verts = m.positions.length / 3;
    if (m.indices.length % 3 !== 0 || m.indices.length === 0) return `indices length ${m.indices.length}`;
    for (const i of m.indices) if (i >= verts) return `index ${i} ≥ ${verts} vertices`;
    for (const v of m.positions) if (!Number.isFinite(v)) return `position ${v}`;
    if (m.normals) {
      if (m.normals.length !== (m.indices.length / 3) * 9) return `normals length ${m.normals.length}`;
      for (const v of m.normals) if (!Number.isFinite(v)) return `normal ${v}`;
    }
    if (maxTriangles !== undefined && m.indices.length / 3 > maxTriangles) return `${m.indices.length / 3} triangles over the limit ${maxTriangles}`;
    return null;
  } catch (e) {
    if (!(e instanceof ObjError)) return `threw ${e instanceof Error ? `${e.name}: ${e.message}` : String(e)}`;
    if (!/^line \d+: \S/.test(e.message)) return `message does not start with its line: ${e.message}`;
    if (!(e.line >= 1 && e.line <= lineCount(text))) return `line ${e.line} outside the file's ${lineCount(text)} lines`;
    return null;
  }
}

/** null when an image reader behaved: a sound image, or an ImageFormatError naming a byte of the file. */
function imageProblem(bytes: Uint8Array, read: (b: Uint8Array) => FloatImage): string | null {
  try {
    const img = read(bytes);
    if (!(Number.isInteger(img.width) && Number.isInteger(img.height) && img.width >= 1 && img.height >= 1)) return `size ${img.width}×${img.height}`;
    if (img.data.length !== img.width * img.height * 3) return `data length ${img.data.length} for ${img.width}×${img.height}`;
    return null;
  } catch (e) {
    if (!(e instanceof ImageFormatError)) return `threw ${e instanceof Error ? `${e.name}: ${e.message}` : String(e)}`;
    if (!/: byte \d+: \S/.test(e.message)) return `message does not name a byte: ${e.message}`;
    if (!(e.offset >= 0 && e.offset <= bytes.length)) return `offset ${e.offset} outside the ${bytes.length}-byte file`;
    return null;
  }
}

function hdrWith(header: string, body: ArrayLike<number> = []): Uint8Array {
  const h = enc.encode(header);
  const out = new Uint8Array(h.length + body.length);
  out.set(h, 0);
  out.set(Array.from(body), h.length);
  return out;
}

/** Fewest bytes that can hold `rows` RLE scanlines of width w: a 4-byte marker, then per channel ⌈w/127⌉ runs of 2 bytes (Walter's rgbe.c format). */
function minRleBytes(w: number, rows: number): number {
  return rows * (4 + 4 * 2 * Math.ceil(w / 127));
}

// ---------------------------------------------------------------------------------------------
// OBJ

describe("hostile OBJ files", () => {
  const targeted: [string, string][] = [
    ["index far past the end", "v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 99999999999999999999\n"],
    ["index 2^32 (wraps to 0 in 32 bits)", "v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 4294967297\n"],
    ["negative index past the start", "v 0 0 0\nv 1 0 0\nv 0 1 0\nf -1 -2 -4\n"],
    ["index -0", "v 0 0 0\nv 1 0 0\nv 0 1 0\nf -0 1 2\n"],
    ["NaN coordinate", "v nan 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\n"],
    ["Infinity coordinate", "v Infinity 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\n"],
    ["overflowing exponent", "v 0 0 0\nv 1e400 0 0\nv 0 1 0\nf 1 2 3\n"],
    ["hex coordinate", "v 0x10 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\n"],
    ["NaN normal", "v 0 0 0\nv 1 0 0\nv 0 1 0\nvn nan 0 1\nf 1//1 2//1 3//1\n"],
    ["normal index out of range", "v 0 0 0\nv 1 0 0\nv 0 1 0\nvn 0 0 1\nf 1//2 2//1 3//1\n"],
    ["five-part corner", "v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1/1/1/1/1 2 3\n"],
    ["empty corner parts", "v 0 0 0\nv 1 0 0\nv 0 1 0\nf / // ///\n"],
    ["a face before any vertex", "f 1 2 3\nv 0 0 0\n"],
    ["continuation at the end", "v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 \\"],
    ["no faces at all", "# only a comment\nv 0 0 0\n"],
    ["empty file", ""],
    ["only NUL bytes", "\u0000".repeat(1000)],
    ["CR-only line ends with a bad index", "v 0 0 0\rv 1 0 0\rv 0 1 0\rf 1 2 9\r"],
    ["UTF-8 replacement characters", dec.decode(new Uint8Array([0x76, 0x20, 0xff, 0xfe, 0x20, 0x30, 0x20, 0x30, 0x0a]))],
    ["a 200 000-corner polygon", "v 0 0 0\nv 1 0 0\nv 0 1 0\nf " + "1 2 3 ".repeat(66_667) + "\n"],
    ["a 2 MB comment line", "#" + "x".repeat(2_000_000) + "\nv 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\n"],
  ];
  it.each(targeted)("%s: a sound mesh or an ObjError naming its line", (_name, text) => {
    expect(objProblem(text)).toBeNull();
  });

  it("refuses out-of-range and non-finite input rather than producing a mesh", () => {
    for (const [name, text] of targeted.slice(0, 9)) {
      expect(() => parseObj(text), name).toThrow(ObjError);
    }
  });

  it("stops a polygon that crosses the triangle limit before storing its triangles", () => {
    const text = "v 0 0 0\nv 1 0 0\nv 0 1 0\nf " + "1 2 3 ".repeat(100_000) + "\n";
    const { bytes, error } = largestAllocation(() => parseObj(text, { maxTriangles: 1000 }));
    expect(error).toBeInstanceOf(ObjError);
    expect((error as ObjError).line).toBe(4);
    // The growable buffers start at 1024 entries; refusing at the face line means they never grew for it.
    expect(bytes).toBeLessThanOrEqual(1024 * 4);
  });

  it("600 mutated and random files: a sound mesh or an ObjError with a line inside the file; memory proportional to the file", () => {
    const rng = seedrandom("tracewell-hostile-obj");
    const base = PEBBLE_OBJ + Array.from({ length: 40 }, (_, i) => `v ${i} ${i * 0.5} -${i}\nf -1 -2 -3\nf ${i + 1}//2 1//1 2//4`).join("\n");
    const hostileLines = ["f 1 2 0", "f 1 2 -999", "v 1 2", "vn 1", "f 1", "v 1e309 0 0", "f 2//9 1 3", "\\", "f 1/1/1/1 2 3", "v - - -", "f a b c", "vt 0 0", "o x", "usemtl y"];
    const problems: string[] = [];
    let largestRatio = 0;
    for (let i = 0; i < 600; i++) {
      let text: string;
      const kind = i % 4;
      if (kind === 0) {
        // random bytes, decoded the way the compiler and the upload check decode them
        const n = 1 + Math.floor(rng() * 2000);
        const bytes = new Uint8Array(n);
        for (let k = 0; k < n; k++) bytes[k] = Math.floor(rng() * 256);
        text = dec.decode(bytes);
      } else if (kind === 1) {
        text = base.slice(0, Math.floor(rng() * base.length));
      } else if (kind === 2) {
        const chars = base.split("");
        for (let k = 0; k < 1 + Math.floor(rng() * 8); k++) chars[Math.floor(rng() * chars.length)] = String.fromCharCode(Math.floor(rng() * 128));
        text = chars.join("");
      } else {
        const lines = base.split("\n");
        for (let k = 0; k < 1 + Math.floor(rng() * 3); k++) lines.splice(Math.floor(rng() * lines.length), 0, hostileLines[Math.floor(rng() * hostileLines.length)]!);
        text = lines.join("\n");
      }
      let problem: string | null = null;
      const { bytes } = largestAllocation(() => {
        problem = objProblem(text, 500);
      });
      if (problem) problems.push(`#${i}: ${problem}`);
      largestRatio = Math.max(largestRatio, (bytes - 1024 * 4) / Math.max(1, text.length));
    }
    expect(problems.slice(0, 10)).toEqual([]);
    // Beyond the fixed initial buffers, a reader may allocate a small multiple of the text's size, never more.
    expect(largestRatio).toBeLessThan(64);
  });
});

// ---------------------------------------------------------------------------------------------
// Radiance .hdr

describe("hostile Radiance .hdr files", () => {
  const good = makeLightboxHdr(); // 16×8, RLE scanlines
  const flatGood = encodeHdr({ width: 4, height: 3, data: new Float32Array(36).fill(0.5) }); // width < 8: flat pixels

  it("the allocation spy sees the decoder's image buffer (so the bounds below can fail)", () => {
    const { bytes, error } = largestAllocation(() => decodeHdr(good));
    expect(error).toBeNull();
    expect(bytes).toBeGreaterThanOrEqual(16 * 8 * 3 * 4);
  });

  const headers: [string, Uint8Array][] = [
    ["zero height", hdrWith("#?RADIANCE\n\n-Y 0 +X 16\n")],
    ["zero width", hdrWith("#?RADIANCE\n\n-Y 16 +X 0\n")],
    ["negative size", hdrWith("#?RADIANCE\n\n-Y -4 +X 16\n")],
    ["non-numeric size", hdrWith("#?RADIANCE\n\n-Y many +X 16\n")],
    ["100 000 × 100 000 with no data", hdrWith("#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n\n-Y 100000 +X 100000\n")],
    ["10^23 rows", hdrWith("#?RADIANCE\n\n-Y 99999999999999999999999 +X 1\n")],
    ["just over the map limit", hdrWith(`#?RADIANCE\n\n-Y ${LIMITS.maxMapPixels / 8192 + 1} +X 8192\n`)],
    ["the largest allowed map, 4 bytes of data", hdrWith(`#?RADIANCE\n\n-Y ${LIMITS.maxMapPixels / 8192} +X 8192\n`, [2, 2, 0x20, 0])],
    ["1 × 16M flat, no data", hdrWith("#?RADIANCE\n\n-Y 1 +X 16777216\n")],
    ["unsupported pixel format", hdrWith("#?RADIANCE\nFORMAT=32-bit_rle_xyze\n\n-Y 1 +X 1\n", [1, 1, 1, 128])],
    ["exposure zero", hdrWith("#?RADIANCE\nEXPOSURE=0\n\n-Y 1 +X 1\n", [1, 1, 1, 128])],
    ["exposure NaN", hdrWith("#?RADIANCE\nEXPOSURE=nan\n\n-Y 1 +X 1\n", [1, 1, 1, 128])],
    ["no magic", hdrWith("P6\n16 8\n255\n")],
    ["header never ends", hdrWith("#?RADIANCE\n" + "COMMENT x\n".repeat(10_000))],
    ["no resolution line", hdrWith("#?RADIANCE\n\n")],
    ["empty", new Uint8Array(0)],
  ];

  it.each(headers)("%s: refused (or read) naming a byte, with bounded memory", (_name, bytes) => {
    let problem: string | null = null;
    const { bytes: largest } = largestAllocation(() => {
      problem = imageProblem(bytes, (b) => decodeHdr(b));
    });
    expect(problem).toBeNull();
    // No buffer sized by the header may exceed the map limit, whether or not the caller passed maxPixels.
    expect(largest).toBeLessThanOrEqual(LIMITS.maxMapPixels * 3 * 4);
    // …nor the most pixels the file's remaining bytes could encode (RLE's best case, ~16 pixels per byte).
    const bound = Math.max(4096, (bytes.length / (8 / 127)) * 3 * 4 + 4096);
    expect(largest, "an image buffer far larger than the file could fill").toBeLessThanOrEqual(bound);
  });

  it("readHdrSize reports absurd sizes without allocating, so callers can check them against LIMITS first", () => {
    const bytes = hdrWith("#?RADIANCE\n\n-Y 100000 +X 100000\n");
    let size = { width: 0, height: 0 };
    const { bytes: largest } = largestAllocation(() => {
      size = readHdrSize(bytes);
    });
    expect(size).toEqual({ width: 100000, height: 100000 });
    expect(largest).toBe(0);
  });

  const rle = (bytes: number[]) => hdrWith("#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n\n-Y 1 +X 8\n", [2, 2, 0, 8, ...bytes]);
  const overruns: [string, Uint8Array, RegExp][] = [
    ["a run longer than the scanline", rle([128 + 9, 5]), /run of 9 overflows scanline 0/],
    ["a literal longer than the scanline", rle([9, 1, 2, 3, 4, 5, 6, 7, 8, 9]), /literal of 9 overflows/],
    ["a zero-length packet", rle([0]), /zero-length packet/],
    ["a run cut off before its value", rle([128 + 8]), /unexpected end of data/],
    ["a literal cut short", rle([8, 1, 2, 3]), /unexpected end of data/],
    ["a scanline that says another width", hdrWith("#?RADIANCE\n\n-Y 1 +X 8\n", [2, 2, 0, 9, 136, 1, 136, 1, 136, 1, 136, 128]), /says width 9/],
  ];
  it.each(overruns)("RLE: %s is refused naming its byte", (_name, bytes, message) => {
    let err: unknown = null;
    try {
      decodeHdr(bytes);
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(ImageFormatError);
    expect((err as ImageFormatError).message).toMatch(message);
    expect((err as ImageFormatError).offset).toBeGreaterThan(0);
    expect((err as ImageFormatError).offset).toBeLessThanOrEqual(bytes.length);
  });

  it("every truncation of an RLE file and of a flat file is refused naming a byte inside the file", () => {
    const problems: string[] = [];
    for (const file of [good, flatGood]) {
      for (let n = 0; n < file.length; n++) {
        const cut = file.slice(0, n);
        let threw: unknown = null;
        try {
          decodeHdr(cut);
        } catch (e) {
          threw = e;
        }
        if (!(threw instanceof ImageFormatError)) problems.push(`cut at ${n}: ${threw ? String(threw) : "decoded"}`);
        else if (threw.offset > n) problems.push(`cut at ${n}: offset ${threw.offset}`);
      }
    }
    expect(problems.slice(0, 10)).toEqual([]);
  });

  it("800 files of flipped or random bytes: a sound image or an ImageFormatError naming a byte; memory bounded", () => {
    const rng = seedrandom("tracewell-hostile-hdr");
    const problems: string[] = [];
    for (let i = 0; i < 800; i++) {
      let bytes: Uint8Array;
      if (i % 4 === 0) {
        bytes = new Uint8Array(32 + Math.floor(rng() * 600));
        for (let k = 0; k < bytes.length; k++) bytes[k] = Math.floor(rng() * 256);
        if (rng() < 0.5) bytes.set(enc.encode("#?RADIANCE\n\n-Y 8 +X 16\n"), 0);
      } else {
        bytes = (i % 4 === 1 ? flatGood : good).slice();
        for (let k = 0; k < 1 + Math.floor(rng() * 6); k++) bytes[Math.floor(rng() * bytes.length)] = Math.floor(rng() * 256);
      }
      let problem: string | null = null;
      const { bytes: largest } = largestAllocation(() => {
        problem = imageProblem(bytes, (b) => decodeHdr(b));
      });
      if (problem) problems.push(`#${i}: ${problem}`);
      else if (largest > LIMITS.maxMapPixels * 12) problems.push(`#${i}: allocated ${largest} bytes`);
    }
    expect(problems.slice(0, 10)).toEqual([]);
  });

  it("a too-short file claiming a large map is refused before its image buffer is allocated", () => {
    // 2048 × 1024 claims 6M floats; 1 KB of data cannot hold even the 1024 scanline markers.
    const bytes = hdrWith("#?RADIANCE\n\n-Y 1024 +X 2048\n", new Array(1024).fill(0));
    expect(bytes.length).toBeLessThan(minRleBytes(2048, 1024));
    const { bytes: largest, error } = largestAllocation(() => decodeHdr(bytes));
    expect(error).toBeInstanceOf(ImageFormatError);
    expect(largest, "bytes allocated before the file was found too short").toBeLessThan(2048 * 1024 * 3 * 4);
  });
});

describe("the upload check on hostile files", () => {
  it("names the line or byte and never throws", () => {
    const files: [string, Uint8Array][] = [
      ["bad.obj", enc.encode("v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 7\n")],
      ["garbage.obj", new Uint8Array([0xff, 0x00, 0x13, 0x37])],
      ["huge.hdr", hdrWith("#?RADIANCE\n\n-Y 100000 +X 100000\n")],
      ["cut.hdr", makeLightboxHdr().slice(0, 60)],
      ["overrun.hdr", hdrWith("#?RADIANCE\n\n-Y 1 +X 8\n", [2, 2, 0, 8, 137, 5])],
    ];
    for (const [name, bytes] of files) {
      const r = inspectAsset(name, bytes);
      expect(r.ok, name).toBe(false);
      if (!r.ok) expect(r.message, name).toMatch(new RegExp(`^${name.replace(".", "\\.")}: .*(line \\d+|byte \\d+|limit|no faces)`));
    }
  });
});

describe("hostile PFM files (stored render buffers are read back with this reader)", () => {
  const good = encodePfm({ width: 3, height: 2, data: new Float32Array(18).fill(1) });
  const cases: [string, Uint8Array][] = [
    ["100 000 × 100 000 with no data", enc.encode("PF\n100000 100000\n-1.0\n")],
    ["size overflowing 2^53", enc.encode("PF\n99999999999 99999999999\n-1.0\n")],
    ["zero scale", enc.encode("PF\n1 1\n0\n\0\0\0\0\0\0\0\0\0\0\0\0")],
    ["NaN scale", enc.encode("PF\n1 1\nnan\n\0\0\0\0\0\0\0\0\0\0\0\0")],
    ["truncated", good.slice(0, good.length - 1)],
    ["one byte too many", new Uint8Array([...good, 0])],
    ["grey magic with RGB data", new Uint8Array([...enc.encode("Pf"), ...good.slice(2)])],
  ];
  it.each(cases)("%s: refused naming a byte, with bounded memory", (_name, bytes) => {
    let problem: string | null = null;
    const { bytes: largest } = largestAllocation(() => {
      problem = imageProblem(bytes, decodePfm);
    });
    expect(problem).toBeNull();
    expect(largest).toBeLessThanOrEqual(bytes.length * 4 + 4096);
  });
});

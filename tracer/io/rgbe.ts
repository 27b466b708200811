/**
 * Radiance RGBE (.hdr) reader and writer: 8-bit mantissas sharing one 8-bit exponent (Ward, "Real
 * Pixels", Graphics Gems II, 1991) and the adaptive run-length scanline encoding, following Bruce
 * Walter's reference rgbe.c (Cornell, 1995): header `#?RADIANCE`, `FORMAT=32-bit_rle_rgbe`, a blank
 * line, then `-Y <height> +X <width>` (rows top to bottom). Decoding uses Walter's convention
 * value = byte · 2^(E − 136) (no +0.5), so values exactly representable in RGBE round-trip exactly.
 */
import { ImageFormatError, type FloatImage } from "./image";
import { LIMITS } from "../scene/limits";

const FORMAT = "Radiance .hdr";
const MIN_RLE_WIDTH = 8;
const MAX_RLE_WIDTH = 0x7fff;
const MIN_RUN = 4;
/** Largest encodable channel value: mantissa 255 with exponent byte 255 (255 · 2^119). */
export const RGBE_MAX = 255 * 2 ** 119;

/** Writes one pixel's 4 bytes at out[o..o+3]. Negative and NaN channels become 0; overflow clamps. */
export function floatToRgbe(r: number, g: number, b: number, out: Uint8Array, o: number): void {
  // NaN and negatives become 0; anything beyond the format's range (including Infinity) clamps to its top.
  r = r > 0 ? (r < RGBE_MAX ? r : RGBE_MAX) : 0;
  g = g > 0 ? (g < RGBE_MAX ? g : RGBE_MAX) : 0;
  b = b > 0 ? (b < RGBE_MAX ? b : RGBE_MAX) : 0;
  let v = r > g ? r : g;
  if (b > v) v = b;
  if (v < 1e-32) {
    out[o] = out[o + 1] = out[o + 2] = out[o + 3] = 0;
    return;
  }
  // frexp: v = m · 2^e with m in [0.5, 1)
  let e = Math.floor(Math.log2(v)) + 1;
  const m0 = v / 2 ** e; // exact: division by a power of two
  if (m0 >= 1) e++; // log2 may round across an integer next to a power of two
  else if (m0 < 0.5) e--;
  const m = v / 2 ** e;
  // float32 arithmetic as in the reference code, so byte values match it exactly
  const s = Math.fround((m * 256) / v);
  out[o] = Math.floor(Math.fround(r * s));
  out[o + 1] = Math.floor(Math.fround(g * s));
  out[o + 2] = Math.floor(Math.fround(b * s));
  out[o + 3] = e + 128;
}

export function rgbeToFloat(bytes: ArrayLike<number>, o: number, out: Float32Array, oo: number): void {
  const e = bytes[o + 3]!;
  if (e === 0) {
    out[oo] = out[oo + 1] = out[oo + 2] = 0;
    return;
  }
  const f = 2 ** (e - 136);
  out[oo] = bytes[o]! * f;
  out[oo + 1] = bytes[o + 1]! * f;
  out[oo + 2] = bytes[o + 2]! * f;
}

/** A growable byte buffer for the writer. */
class ByteSink {
  buf: Uint8Array;
  length = 0;
  constructor(capacity: number) {
    this.buf = new Uint8Array(Math.max(64, capacity));
  }
  ensure(n: number): void {
    if (this.length + n <= this.buf.length) return;
    let cap = this.buf.length * 2;
    while (cap < this.length + n) cap *= 2;
    const next = new Uint8Array(cap);
    next.set(this.buf.subarray(0, this.length));
    this.buf = next;
  }
  byte(b: number): void {
    this.ensure(1);
    this.buf[this.length++] = b;
  }
  bytes(src: Uint8Array, from: number, to: number): void {
    this.ensure(to - from);
    this.buf.set(src.subarray(from, to), this.length);
    this.length += to - from;
  }
  ascii(s: string): void {
    this.ensure(s.length);
    for (let i = 0; i < s.length; i++) this.buf[this.length++] = s.charCodeAt(i) & 0x7f;
  }
  result(): Uint8Array {
    return this.buf.slice(0, this.length);
  }
}

/** One plane of one scanline, adaptive RLE (runs of 4..127, literal dumps of 1..128), as the reference writer does it. */
function writePlaneRle(out: ByteSink, data: Uint8Array, n: number): void {
  let cur = 0;
  while (cur < n) {
    let begRun = cur;
    let runCount = 0;
    let oldRunCount = 0;
    while (runCount < MIN_RUN && begRun < n) {
      begRun += runCount;
      oldRunCount = runCount;
      runCount = 1;
      while (begRun + runCount < n && runCount < 127 && data[begRun] === data[begRun + runCount]) runCount++;
    }
    if (oldRunCount > 1 && oldRunCount === begRun - cur) {
      out.byte(128 + oldRunCount);
      out.byte(data[cur]!);
      cur = begRun;
    }
    while (cur < begRun) {
      const count = Math.min(128, begRun - cur);
      out.byte(count);
      out.bytes(data, cur, cur + count);
      cur += count;
    }
    if (runCount >= MIN_RUN) {
      out.byte(128 + runCount);
      out.byte(data[begRun]!);
      cur += runCount;
    }
  }
}

export function encodeHdr(img: FloatImage): Uint8Array {
  const { width: w, height: h, data } = img;
  if (!Number.isInteger(w) || !Number.isInteger(h) || w < 1 || h < 1) throw new Error(`encodeHdr: invalid size ${w}×${h}`);
  if (data.length < w * h * 3) throw new Error(`encodeHdr: data has ${data.length} floats, need ${w * h * 3}`);
  const out = new ByteSink(64 + w * h * 4);
  out.ascii(`#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n\n-Y ${h} +X ${w}\n`);
  const rle = w >= MIN_RLE_WIDTH && w <= MAX_RLE_WIDTH;
  const line = new Uint8Array(w * 4);
  const plane = new Uint8Array(w);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const i = (y * w + x) * 3;
      floatToRgbe(data[i]!, data[i + 1]!, data[i + 2]!, line, x * 4);
    }
    if (!rle) {
      out.bytes(line, 0, line.length);
      continue;
    }
    out.byte(2);
    out.byte(2);
    out.byte(w >> 8);
    out.byte(w & 0xff);
    for (let c = 0; c < 4; c++) {
      for (let x = 0; x < w; x++) plane[x] = line[x * 4 + c]!;
      writePlaneRle(out, plane, w);
    }
  }
  return out.result();
}

type Header = { width: number; height: number; flipY: boolean; flipX: boolean; exposure: number; dataStart: number };

function readHeader(bytes: Uint8Array): Header {
  let pos = 0;
  const readLine = (): { text: string; start: number } | null => {
    const start = pos;
    while (pos < bytes.length && bytes[pos] !== 10) pos++;
    if (pos >= bytes.length) return null;
    let text = "";
    for (let i = start; i < pos; i++) text += String.fromCharCode(bytes[i]!);
    pos++; // newline
    return { text, start };
  };
  const first = readLine();
  if (!first || !first.text.startsWith("#?")) throw new ImageFormatError(FORMAT, 0, 'not a Radiance .hdr file (it must start with "#?")');
  let exposure = 1;
  for (;;) {
    const l = readLine();
    if (!l) throw new ImageFormatError(FORMAT, pos, "header does not end (no blank line before the resolution line)");
    if (l.text === "") break;
    if (l.text.startsWith("FORMAT=")) {
      const f = l.text.slice(7).trim();
      if (f !== "32-bit_rle_rgbe") throw new ImageFormatError(FORMAT, l.start, `unsupported pixel format "${f}" (only 32-bit_rle_rgbe)`);
    } else if (l.text.startsWith("EXPOSURE=")) {
      const e = Number(l.text.slice(9).trim());
      if (!(e > 0) || !Number.isFinite(e)) throw new ImageFormatError(FORMAT, l.start, `invalid EXPOSURE "${l.text.slice(9)}"`);
      exposure *= e; // cumulative multiplier already applied to the stored pixels (header convention)
    }
  }
  const res = readLine();
  if (!res) throw new ImageFormatError(FORMAT, pos, "missing resolution line");
  const m = /^\s*([+-])Y\s+(\d+)\s+([+-])X\s+(\d+)\s*$/.exec(res.text);
  if (!m) throw new ImageFormatError(FORMAT, res.start, `unsupported resolution line "${res.text.slice(0, 40)}" (expected "-Y <height> +X <width>")`);
  const height = Number(m[2]);
  const width = Number(m[4]);
  if (width < 1 || height < 1) throw new ImageFormatError(FORMAT, res.start, `invalid image size ${width}×${height}`);
  return { width, height, flipY: m[1] === "+", flipX: m[3] === "-", exposure, dataStart: pos };
}

/** Width and height from the header alone (for limit checks before decoding). */
export function readHdrSize(bytes: Uint8Array): { width: number; height: number } {
  const h = readHeader(bytes);
  return { width: h.width, height: h.height };
}

export function decodeHdr(bytes: Uint8Array, opts: { maxPixels?: number } = {}): FloatImage {
  const hdr = readHeader(bytes);
  const { width: w, height: h } = hdr;
  // The header is untrusted: check the size against the limit and against the bytes actually present
  // before allocating anything sized by it.
  const maxPixels = opts.maxPixels ?? LIMITS.maxMapPixels;
  if (w * h > maxPixels) {
    throw new ImageFormatError(FORMAT, hdr.dataStart, `image is ${w}×${h}, more than the ${maxPixels}-pixel limit`);
  }
  // Fewest bytes that can encode the image: new-style RLE packs a run of up to 127 equal bytes into 2 bytes
  // per channel after a 4-byte scanline header; widths outside [8, 32767] must be stored flat (4 bytes a pixel).
  const rleWidth = w >= 8 && w <= 0x7fff;
  const minBytes = rleWidth ? h * (4 + 4 * 2 * Math.ceil(w / 127)) : w * h * 4;
  // Small images skip this and get the scanline decoder's more precise message about where the data breaks.
  if (w * h > 65536 && bytes.length - hdr.dataStart < minBytes) {
    throw new ImageFormatError(
      FORMAT,
      bytes.length,
      `file ends after ${bytes.length - hdr.dataStart} bytes of pixel data; a ${w}×${h} image needs at least ${minBytes}`,
    );
  }
  const data = new Float32Array(w * h * 3);
  const line = new Uint8Array(w * 4);
  let pos = hdr.dataStart;
  const need = (n: number, row: number) => {
    if (pos + n > bytes.length) throw new ImageFormatError(FORMAT, bytes.length, `unexpected end of data in row ${row}`);
  };

  let flat = w < MIN_RLE_WIDTH || w > MAX_RLE_WIDTH;
  for (let y = 0; y < h; y++) {
    if (!flat) {
      need(4, y);
      const isRle = bytes[pos] === 2 && bytes[pos + 1] === 2 && (bytes[pos + 2]! & 0x80) === 0;
      if (!isRle) flat = true; // the rest of the file is uncompressed pixels
    }
    if (flat) {
      need(w * 4, y);
      line.set(bytes.subarray(pos, pos + w * 4));
      pos += w * 4;
    } else {
      const lineWidth = (bytes[pos + 2]! << 8) | bytes[pos + 3]!;
      if (lineWidth !== w) throw new ImageFormatError(FORMAT, pos, `scanline ${y} says width ${lineWidth}, the header says ${w}`);
      pos += 4;
      for (let c = 0; c < 4; c++) {
        let x = 0;
        while (x < w) {
          need(1, y);
          const count = bytes[pos]!;
          if (count > 128) {
            const run = count - 128;
            if (x + run > w) throw new ImageFormatError(FORMAT, pos, `run of ${run} overflows scanline ${y} (${w - x} pixels left)`);
            need(2, y);
            const v = bytes[pos + 1]!;
            for (let k = 0; k < run; k++) line[(x + k) * 4 + c] = v;
            x += run;
            pos += 2;
          } else {
            if (count === 0) throw new ImageFormatError(FORMAT, pos, `zero-length packet in scanline ${y}`);
            if (x + count > w) throw new ImageFormatError(FORMAT, pos, `literal of ${count} overflows scanline ${y} (${w - x} pixels left)`);
            need(1 + count, y);
            for (let k = 0; k < count; k++) line[(x + k) * 4 + c] = bytes[pos + 1 + k]!;
            x += count;
            pos += 1 + count;
          }
        }
      }
    }
    const outRow = hdr.flipY ? h - 1 - y : y;
    for (let x = 0; x < w; x++) {
      const outX = hdr.flipX ? w - 1 - x : x;
      rgbeToFloat(line, x * 4, data, (outRow * w + outX) * 3);
    }
  }
  if (hdr.exposure !== 1) for (let i = 0; i < data.length; i++) data[i] = data[i]! / hdr.exposure;
  return { width: w, height: h, data };
}

/**
 * PNG writer. fast-png (pure JavaScript, fflate for deflate) is used because it runs unchanged in browser
 * workers and Node; pngjs needs Node's Buffer and zlib. Tests decode our output with pngjs as an
 * independent reader. An sRGB chunk (PNG specification, W3C, §11.3.3.5 in the 2003 edition: value
 * from memory) marks the pixels as IEC 61966-2-1 encoded, which is what displayToRgba8 produces.
 */
import { encode } from "fast-png";
import type { FloatImage } from "./image";
import { displayToRgba8, type Display } from "../film/display";

const CRC_TABLE = (() => {
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c >>> 0;
  }
  return t;
})();

/** CRC-32 (ISO 3309 / ITU-T V.42 polynomial), as PNG chunks require. */
export function crc32(bytes: Uint8Array, start = 0, end = bytes.length): number {
  let c = 0xffffffff;
  for (let i = start; i < end; i++) c = CRC_TABLE[(c ^ bytes[i]!) & 0xff]! ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

/** Inserts an sRGB chunk (rendering intent 0, perceptual) after IHDR. */
function withSrgbChunk(png: Uint8Array): Uint8Array {
  // signature (8) + IHDR chunk (4 length + 4 type + 13 data + 4 crc) = 33 bytes
  const ihdrEnd = 33;
  const chunk = new Uint8Array(13);
  const dv = new DataView(chunk.buffer);
  dv.setUint32(0, 1);
  chunk.set([0x73, 0x52, 0x47, 0x42], 4); // "sRGB"
  chunk[8] = 0;
  dv.setUint32(9, crc32(chunk, 4, 9));
  const out = new Uint8Array(png.length + chunk.length);
  out.set(png.subarray(0, ihdrEnd), 0);
  out.set(chunk, ihdrEnd);
  out.set(png.subarray(ihdrEnd), ihdrEnd + chunk.length);
  return out;
}

/** 8-bit RGBA, row 0 = top, to a PNG file. */
export function encodePng(width: number, height: number, rgba: Uint8Array | Uint8ClampedArray): Uint8Array {
  if (rgba.length !== width * height * 4) throw new Error(`encodePng: ${rgba.length} bytes for a ${width}×${height} RGBA image (need ${width * height * 4})`);
  const data = rgba instanceof Uint8Array ? rgba : new Uint8Array(rgba.buffer, rgba.byteOffset, rgba.length);
  const png = encode({ width, height, data, channels: 4, depth: 8 });
  return withSrgbChunk(png);
}

/** Linear radiance → display transform → PNG. */
export function imageToPng(img: FloatImage, display: Display): Uint8Array {
  return encodePng(img.width, img.height, displayToRgba8(img, display));
}

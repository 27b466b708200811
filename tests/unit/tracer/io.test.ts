import { describe, expect, it } from "vitest";
import { PNG } from "pngjs";
import { decodeHdr, encodeHdr, floatToRgbe, readHdrSize, rgbeToFloat } from "../../../tracer/io/rgbe";
import { decodePfm, encodePfm } from "../../../tracer/io/pfm";
import { crc32, encodePng, imageToPng } from "../../../tracer/io/png";
import { ImageFormatError, type FloatImage } from "../../../tracer/io/image";

const ascii = (s: string) => Uint8Array.from(s, (c) => c.charCodeAt(0));

/** Deterministic pseudo-random floats for round trips (a fixed LCG; the values only need variety). */
function lcg(seed: number) {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}

function randomImage(w: number, h: number, seed: number, spread = 8): FloatImage {
  const r = lcg(seed);
  const data = new Float32Array(w * h * 3);
  for (let i = 0; i < data.length; i++) data[i] = Math.pow(2, (r() - 0.5) * 2 * spread) * (r() < 0.1 ? 0 : 1);
  return { width: w, height: h, data };
}

/**
 * An independent minimal RGBE reader written from the format description (REFERENCE_CHECKS §4, after
 * Walter's rgbe.c): header to blank line, "-Y h +X w", per scanline 02 02 hi lo then four planes of
 * packets (c > 128: run of c − 128; else c literal bytes). Decodes with byte · 2^(E − 136).
 */
function referenceReadRgbe(bytes: Uint8Array): FloatImage {
  const text = new TextDecoder("latin1").decode(bytes);
  const blank = text.indexOf("\n\n");
  const resEnd = text.indexOf("\n", blank + 2);
  const [, hs, , ws] = text.slice(blank + 2, resEnd).split(" ");
  const w = Number(ws);
  const h = Number(hs);
  let p = resEnd + 1;
  const data = new Float32Array(w * h * 3);
  for (let y = 0; y < h; y++) {
    const px = new Uint8Array(w * 4);
    if (w >= 8 && w <= 0x7fff) {
      expect([bytes[p], bytes[p + 1], (bytes[p + 2]! << 8) | bytes[p + 3]!]).toEqual([2, 2, w]);
      p += 4;
      for (let c = 0; c < 4; c++) {
        for (let x = 0; x < w; ) {
          const n = bytes[p++]!;
          if (n > 128) {
            const v = bytes[p++]!;
            for (let k = 0; k < n - 128; k++) px[(x++) * 4 + c] = v;
          } else for (let k = 0; k < n; k++) px[(x++) * 4 + c] = bytes[p++]!;
        }
      }
    } else {
      px.set(bytes.subarray(p, p + w * 4));
      p += w * 4;
    }
    for (let x = 0; x < w; x++) {
      const e = px[x * 4 + 3]!;
      for (let c = 0; c < 3; c++) data[(y * w + x) * 3 + c] = e === 0 ? 0 : px[x * 4 + c]! * Math.pow(2, e - 136);
    }
  }
  expect(p).toBe(bytes.length);
  return { width: w, height: h, data };
}

describe("RGBE pixels (Ward, Real Pixels, Graphics Gems II; Walter's rgbe.c float2rgbe/rgbe2float)", () => {
  // Worked pixels of REFERENCE_CHECKS §4, Walter encoder in float32 arithmetic, Walter decode.
  const cases: [number[], number[], number[]][] = [
    [[1, 1, 1], [128, 128, 128, 129], [1, 1, 1]],
    [[0.5, 0.25, 0.125], [128, 64, 32, 128], [0.5, 0.25, 0.125]],
    [[10, 5, 1], [160, 80, 16, 132], [10, 5, 1]],
    [[0.18, 0.18, 0.18], [184, 184, 184, 126], [0.1796875, 0.1796875, 0.1796875]],
    [[1, 0.5, 0], [128, 64, 0, 129], [1, 0.5, 0]],
    [[Math.PI, Math.E, Math.SQRT2], [201, 173, 90, 130], [3.140625, 2.703125, 1.40625]],
    [[1000, 0.001, 0], [250, 0, 0, 138], [1000, 0, 0]],
    [[0, 0, 0], [0, 0, 0, 0], [0, 0, 0]],
    [[1e-40, 0, 0], [0, 0, 0, 0], [0, 0, 0]],
  ];
  it.each(cases)("encodes %j as %j and decodes to %j", (rgb, bytes, back) => {
    const f = Float32Array.from(rgb);
    const out = new Uint8Array(4);
    floatToRgbe(f[0]!, f[1]!, f[2]!, out, 0);
    expect(Array.from(out)).toEqual(bytes);
    const dec = new Float32Array(3);
    rgbeToFloat(out, 0, dec, 0);
    expect(Array.from(dec)).toEqual(back);
  });

  it("keeps the largest channel within 2^-7 relative error over 20 octaves", () => {
    const img = randomImage(64, 16, 7, 10);
    const back = decodeHdr(encodeHdr(img));
    for (let i = 0; i < img.data.length; i += 3) {
      const m = Math.max(img.data[i]!, img.data[i + 1]!, img.data[i + 2]!);
      if (m < 1e-32) continue;
      for (let c = 0; c < 3; c++) {
        const err = Math.abs(back.data[i + c]! - img.data[i + c]!);
        expect(err).toBeLessThanOrEqual(m * 2 ** -7);
      }
    }
  });

  it("clamps negative, NaN and overflowing channels", () => {
    const out = new Uint8Array(4);
    floatToRgbe(-1, Number.NaN, 2, out, 0);
    expect(Array.from(out)).toEqual([0, 0, 128, 130]);
    floatToRgbe(Infinity, 1, 0, out, 0);
    expect(out[3]).toBe(255);
    expect(out[0]).toBe(255);
  });
});

describe("Radiance .hdr files", () => {
  // 8×2 image of REFERENCE_CHECKS §4: row 0 all (1,1,1), row 1 R = i/8.
  const img: FloatImage = { width: 8, height: 2, data: new Float32Array(48) };
  for (let x = 0; x < 8; x++) {
    img.data.set([1, 1, 1], x * 3);
    img.data.set([x / 8, 0, 0], (8 + x) * 3);
  }

  it("writes the exact header and RLE scanlines of the worked example (Walter's rgbe.c writer)", () => {
    const header = "#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n\n-Y 2 +X 8\n";
    expect(header.length).toBe(45);
    const expected = [
      ...ascii(header),
      ...[0x02, 0x02, 0x00, 0x08, 0x88, 0x80, 0x88, 0x80, 0x88, 0x80, 0x88, 0x81],
      ...[2, 2, 0, 8, 8, 0, 128, 128, 192, 128, 160, 192, 224, 136, 0, 136, 0, 4, 0, 126, 127, 127, 132, 128],
    ];
    expect(Array.from(encodeHdr(img))).toEqual(expected);
  });

  it("reads back what it writes, and an independent reader agrees", () => {
    for (const [w, h, seed] of [[8, 2, 1], [37, 5, 2], [300, 3, 3], [5, 4, 4], [1, 1, 5]] as const) {
      const src = randomImage(w, h, seed);
      const bytes = encodeHdr(src);
      const ours = decodeHdr(bytes);
      const ref = referenceReadRgbe(bytes);
      expect(ours.width).toBe(w);
      expect(ours.height).toBe(h);
      expect(Array.from(ours.data)).toEqual(Array.from(ref.data));
      // a second trip is lossless: decoded values are exactly representable
      expect(Array.from(encodeHdr(ours))).toEqual(Array.from(bytes));
      expect(readHdrSize(bytes)).toEqual({ width: w, height: h });
    }
  });

  it("uses runs for long constant stretches (a 200-wide flat sky row compresses to a few bytes)", () => {
    const sky: FloatImage = { width: 200, height: 1, data: new Float32Array(600).fill(0.75) };
    const bytes = encodeHdr(sky);
    const header = "#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n\n-Y 1 +X 200\n".length;
    // per plane: run of 127 + run of 73 = 4 bytes; 4 planes + 4-byte line header = 20
    expect(bytes.length - header).toBe(20);
    expect(Array.from(decodeHdr(bytes).data)).toEqual(Array.from(sky.data));
  });

  it("reads flat (uncompressed) files and bottom-up orientation", () => {
    const w = 8;
    const flat = [...ascii("#?RGBE\nEXPOSURE=2\nFORMAT=32-bit_rle_rgbe\n\n+Y 2 +X 8\n")];
    for (let y = 0; y < 2; y++) for (let x = 0; x < w; x++) flat.push(128, y === 0 ? 128 : 0, 0, 129); // (1,1,0) then (1,0,0)
    const img2 = decodeHdr(Uint8Array.from(flat));
    // +Y: first stored row is the bottom; EXPOSURE=2 means stored values were doubled
    expect(Array.from(img2.data.subarray(0, 3))).toEqual([0.5, 0, 0]);
    expect(Array.from(img2.data.subarray(w * 3, w * 3 + 3))).toEqual([0.5, 0.5, 0]);
  });

  it("names the byte offset of broken data", () => {
    const bytes = encodeHdr(img);
    const err = (b: Uint8Array) => {
      try {
        decodeHdr(b);
      } catch (e) {
        if (e instanceof ImageFormatError) return e;
        throw e;
      }
      throw new Error("expected an error");
    };
    expect(err(bytes.slice(0, 50)).message).toBe("Radiance .hdr: byte 50: unexpected end of data in row 0");
    const bad = bytes.slice();
    bad[45 + 4] = 0x88 + 1; // first R run of 9 pixels in an 8-wide line
    expect(err(bad).message).toBe("Radiance .hdr: byte 49: run of 9 overflows scanline 0 (8 pixels left)");
    const zero = bytes.slice();
    zero[45 + 4] = 0;
    expect(err(zero).offset).toBe(49);
    expect(err(ascii("P6\n1 1\n255\n")).message).toMatch(/^Radiance \.hdr: byte 0: not a Radiance \.hdr file/);
    expect(err(ascii("#?RADIANCE\nFORMAT=32-bit_rle_xyze\n\n-Y 1 +X 1\n\0\0\0\0")).message).toBe('Radiance .hdr: byte 11: unsupported pixel format "32-bit_rle_xyze" (only 32-bit_rle_rgbe)');
    expect(() => decodeHdr(bytes, { maxPixels: 15 })).toThrow(/more than the 15-pixel limit/);
  });
});

describe("PFM (Portable Float Map: 'PF', width height, negative scale = little-endian, rows bottom to top; format page by P. Debevec, value from memory)", () => {
  it("writes the documented layout", () => {
    const img: FloatImage = { width: 2, height: 2, data: Float32Array.from([1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12]) };
    const bytes = encodePfm(img);
    const header = "PF\n2 2\n-1.0\n";
    expect(Array.from(bytes.subarray(0, header.length))).toEqual(Array.from(ascii(header)));
    const dv = new DataView(bytes.buffer, bytes.byteOffset + header.length);
    const floats = Array.from({ length: 12 }, (_, i) => dv.getFloat32(i * 4, true));
    // bottom row (7..12) first
    expect(floats).toEqual([7, 8, 9, 10, 11, 12, 1, 2, 3, 4, 5, 6]);
    expect(bytes.length).toBe(header.length + 48);
  });

  it("round-trips byte-exact, including -0, denormals, infinities and the largest float", () => {
    const special = [0, -0, 1.401298464324817e-45, -1.1754942106924411e-38, 3.4028234663852886e38, Infinity, -Infinity, 0.1, 1 / 3];
    const src = randomImage(13, 7, 9, 30);
    src.data.set(special.map((v) => Math.fround(v)));
    const bytes = encodePfm(src);
    const back = decodePfm(bytes);
    expect(back.width).toBe(13);
    expect(back.height).toBe(7);
    expect(new Uint8Array(back.data.buffer)).toEqual(new Uint8Array(src.data.buffer));
    expect(encodePfm(back)).toEqual(bytes);
  });

  it("reads big-endian and grey maps", () => {
    const be = new Uint8Array([...ascii("PF\n1 2\n1.0\n"), ...new Uint8Array(24)]);
    const dv = new DataView(be.buffer, 11);
    [1, 2, 3, 4, 5, 6].forEach((v, i) => dv.setFloat32(i * 4, v, false));
    expect(Array.from(decodePfm(be).data)).toEqual([4, 5, 6, 1, 2, 3]);
    const grey = new Uint8Array([...ascii("Pf 2 1 -1\n"), ...new Uint8Array(8)]);
    const gv = new DataView(grey.buffer, 10);
    gv.setFloat32(0, 0.25, true);
    gv.setFloat32(4, 2, true);
    expect(Array.from(decodePfm(grey).data)).toEqual([0.25, 0.25, 0.25, 2, 2, 2]);
  });

  it("names the byte offset of a size mismatch and of a bad header", () => {
    const bytes = encodePfm(randomImage(3, 3, 1));
    expect(() => decodePfm(bytes.slice(0, bytes.length - 1))).toThrow("PFM: byte 12: pixel data is 107 bytes, a 3×3 RGB map needs 108");
    expect(() => decodePfm(ascii("PF\n3 x\n-1\n"))).toThrow('PFM: byte 5: invalid height "x"');
    expect(() => decodePfm(ascii("P6\n1 1\n255\n"))).toThrow(/^PFM: byte 0: not a PFM file/);
  });
});

describe("PNG output, decoded by pngjs (an independent PNG package)", () => {
  it("decodes to exactly the RGBA we encoded", () => {
    const w = 23;
    const h = 9;
    const rgba = new Uint8Array(w * h * 4);
    const r = lcg(42);
    for (let i = 0; i < rgba.length; i++) rgba[i] = Math.floor(r() * 256);
    const png = PNG.sync.read(Buffer.from(encodePng(w, h, rgba)));
    expect(png.width).toBe(w);
    expect(png.height).toBe(h);
    expect(new Uint8Array(png.data)).toEqual(rgba);
  });

  it("carries an sRGB chunk with a valid CRC right after IHDR (PNG spec chunk layout)", () => {
    const bytes = encodePng(1, 1, new Uint8Array([1, 2, 3, 255]));
    expect(Array.from(bytes.subarray(0, 8))).toEqual([137, 80, 78, 71, 13, 10, 26, 10]);
    expect(Array.from(bytes.subarray(33, 41))).toEqual([0, 0, 0, 1, 0x73, 0x52, 0x47, 0x42]);
    expect(bytes[41]).toBe(0);
    const crc = new DataView(bytes.buffer, bytes.byteOffset).getUint32(42);
    expect(crc).toBe(crc32(bytes, 37, 42));
    // CRC-32 check value of "123456789" is 0xCBF43926 (ISO 3309 / ITU-T V.42 catalogue check value)
    expect(crc32(ascii("123456789"))).toBe(0xcbf43926);
  });

  it("applies the display transform: linear 0.18 → 118, Reinhard 1.0 → 188 (REFERENCE_CHECKS §3, §11)", () => {
    const img: FloatImage = { width: 2, height: 1, data: Float32Array.from([0.18, 0.18, 0.18, 1, 1, 1]) };
    const plain = PNG.sync.read(Buffer.from(imageToPng(img, { exposure: 0, toneMap: "none" })));
    expect(Array.from(plain.data)).toEqual([118, 118, 118, 255, 255, 255, 255, 255]);
    const tm = PNG.sync.read(Buffer.from(imageToPng(img, { exposure: 0, toneMap: "reinhard" })));
    expect(tm.data[4]).toBe(188);
  });

  it("rejects a buffer of the wrong size", () => {
    expect(() => encodePng(2, 2, new Uint8Array(15))).toThrow("encodePng: 15 bytes for a 2×2 RGBA image (need 16)");
  });
});

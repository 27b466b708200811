// Everything a finished accumulation is published as: the linear beauty (PFM and Radiance .hdr), the PNG as
// displayed, one PFM per light group, a small thumbnail, the serialized accumulation and its hash. Pure, so
// the workspace, the reproduce check, the share page and tests all produce byte-identical files.
import {
  accumulationHash,
  resolveBeauty,
  resolveGroup,
  serializeAccumulation,
  type Accumulation,
} from "@tracer/film/accumulate";
import { displayToRgba8, type Display } from "@tracer/film/display";
import type { FloatImage } from "@tracer/io/image";
import { encodePfm } from "@tracer/io/pfm";
import { encodePng } from "@tracer/io/png";
import { encodeHdr } from "@tracer/io/rgbe";

export type RenderOutputs = {
  pfm: Uint8Array;
  hdr: Uint8Array;
  png: Uint8Array;
  thumb: Uint8Array;
  state: Uint8Array;
  groups: Record<string, Uint8Array>;
  accumulationHash: string;
  width: number;
  height: number;
};

/** Box-filter a linear image down so its longer side is at most `maxSide` (thumbnails average radiance, then display). */
export function downsample(img: FloatImage, maxSide: number): FloatImage {
  const step = Math.max(1, Math.ceil(Math.max(img.width, img.height) / maxSide));
  if (step === 1) return img;
  const w = Math.max(1, Math.floor(img.width / step));
  const h = Math.max(1, Math.floor(img.height / step));
  const out = new Float32Array(w * h * 3);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      let r = 0, g = 0, b = 0;
      for (let dy = 0; dy < step; dy++) {
        for (let dx = 0; dx < step; dx++) {
          const i = ((y * step + dy) * img.width + x * step + dx) * 3;
          r += img.data[i]!;
          g += img.data[i + 1]!;
          b += img.data[i + 2]!;
        }
      }
      const o = (y * w + x) * 3;
      const n = step * step;
      out[o] = r / n;
      out[o + 1] = g / n;
      out[o + 2] = b / n;
    }
  }
  return { width: w, height: h, data: out };
}

export function thumbnailPng(img: FloatImage, display: Display, maxSide = 160): Uint8Array {
  const small = downsample(img, maxSide);
  return encodePng(small.width, small.height, displayToRgba8(small, display));
}

export function renderOutputs(acc: Accumulation, display: Display, groupNames: readonly string[]): RenderOutputs {
  const beauty = resolveBeauty(acc);
  const groups: Record<string, Uint8Array> = {};
  // One group is the beauty itself: storing it twice would only cost space.
  if (groupNames.length > 1) groupNames.forEach((name, g) => (groups[name] = encodePfm(resolveGroup(acc, g))));
  return {
    pfm: encodePfm(beauty),
    hdr: encodeHdr(beauty),
    png: encodePng(beauty.width, beauty.height, displayToRgba8(beauty, display)),
    thumb: thumbnailPng(beauty, display),
    state: serializeAccumulation(acc),
    groups,
    accumulationHash: accumulationHash(acc),
    width: acc.width,
    height: acc.height,
  };
}

// What an uploaded file is and whether it is usable, decided by the tracer's own readers so an asset that
// passes here is one the renderer accepts. Pure (runs in the browser before upload and on the server after).
import { parseObj, ObjError } from "@tracer/geometry/obj";
import { ImageFormatError, type FloatImage } from "@tracer/io/image";
import { decodeHdr, readHdrSize } from "@tracer/io/rgbe";
import { displayToRgba8, reinhardKeyExposure } from "@tracer/film/display";
import { LIMITS } from "@tracer/scene/limits";

export type AssetKind = "mesh" | "envmap";

export type MeshFacts = {
  triangles: number;
  vertices: number;
  hasNormals: boolean;
  bounds: { min: [number, number, number]; max: [number, number, number] };
};
export type MapFacts = { width: number; height: number; maxRadiance: number; meanLuminance: number };
export type AssetFacts = MeshFacts | MapFacts;

export type Inspection =
  | { ok: true; kind: "mesh"; facts: MeshFacts }
  | { ok: true; kind: "envmap"; facts: MapFacts; image: FloatImage }
  | { ok: false; message: string };

/** The upload limit: the tracer's per-asset ceiling. */
export const MAX_ASSET_BYTES = LIMITS.maxAssetBytes;

export function assetKindForName(name: string): AssetKind | null {
  const lower = name.toLowerCase();
  if (lower.endsWith(".obj")) return "mesh";
  if (lower.endsWith(".hdr") || lower.endsWith(".rgbe")) return "envmap";
  return null;
}

export function inspectAsset(name: string, bytes: Uint8Array): Inspection {
  const kind = assetKindForName(name);
  if (!kind) return { ok: false, message: `${name}: only Wavefront .obj meshes and Radiance .hdr maps can be uploaded` };
  if (bytes.length === 0) return { ok: false, message: `${name}: the file is empty` };
  if (bytes.length > MAX_ASSET_BYTES) {
    return { ok: false, message: `${name}: ${bytes.length} bytes is more than the ${MAX_ASSET_BYTES}-byte limit` };
  }
  try {
    if (kind === "mesh") {
      const text = new TextDecoder("utf-8", { fatal: false }).decode(bytes);
      const mesh = parseObj(text, { maxTriangles: LIMITS.maxTriangles });
      const triangles = mesh.indices.length / 3;
      if (triangles === 0) return { ok: false, message: `${name}: the file has no faces (no "f" lines)` };
      const p = mesh.positions;
      const min: [number, number, number] = [Infinity, Infinity, Infinity];
      const max: [number, number, number] = [-Infinity, -Infinity, -Infinity];
      for (let i = 0; i < p.length; i += 3) {
        for (let k = 0; k < 3; k++) {
          const v = p[i + k]!;
          if (v < min[k]!) min[k] = v;
          if (v > max[k]!) max[k] = v;
        }
      }
      return { ok: true, kind, facts: { triangles, vertices: p.length / 3, hasNormals: mesh.normals !== null, bounds: { min, max } } };
    }
    const size = readHdrSize(bytes);
    if (size.width * size.height > LIMITS.maxMapPixels) {
      return { ok: false, message: `${name}: ${size.width}×${size.height} is more than the ${LIMITS.maxMapPixels}-pixel limit` };
    }
    const image = decodeHdr(bytes);
    let maxRadiance = 0;
    let sum = 0;
    const d = image.data;
    for (let i = 0; i < d.length; i += 3) {
      const r = d[i]!, g = d[i + 1]!, b = d[i + 2]!;
      maxRadiance = Math.max(maxRadiance, r, g, b);
      sum += 0.2126 * r + 0.7152 * g + 0.0722 * b; // Rec. 709 luminance weights (ITU-R BT.709)
    }
    return { ok: true, kind, facts: { width: image.width, height: image.height, maxRadiance, meanLuminance: sum / (image.width * image.height) }, image };
  } catch (e) {
    if (e instanceof ObjError || e instanceof ImageFormatError) return { ok: false, message: `${name}: ${e.message}` };
    throw e;
  }
}

/** A small picture of a map: box-filtered down to at most `maxWidth`, auto-exposed, Reinhard tone-mapped, sRGB, RGBA8. */
export function mapThumbnail(image: FloatImage, maxWidth = 256): { width: number; height: number; rgba: Uint8ClampedArray } {
  const step = Math.max(1, Math.ceil(image.width / maxWidth));
  const w = Math.max(1, Math.floor(image.width / step));
  const h = Math.max(1, Math.floor(image.height / step));
  const small: FloatImage = { width: w, height: h, data: new Float32Array(w * h * 3) };
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      let r = 0, g = 0, b = 0;
      for (let dy = 0; dy < step; dy++) {
        for (let dx = 0; dx < step; dx++) {
          const i = ((y * step + dy) * image.width + (x * step + dx)) * 3;
          r += image.data[i]!;
          g += image.data[i + 1]!;
          b += image.data[i + 2]!;
        }
      }
      const o = (y * w + x) * 3;
      const n = step * step;
      small.data[o] = r / n;
      small.data[o + 1] = g / n;
      small.data[o + 2] = b / n;
    }
  }
  // Auto-exposed to a middle-grey key of 0.18 (Reinhard et al. 2002, log-average luminance) so dim and bright maps both read.
  const exposure = Math.max(-20, Math.min(20, reinhardKeyExposure(small)));
  return { width: w, height: h, rgba: displayToRgba8(small, { exposure, toneMap: "reinhard" }) };
}

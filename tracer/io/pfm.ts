/**
 * Portable Float Map: ASCII header "PF" (RGB) or "Pf" (grey), "<width> <height>", then a scale whose
 * sign gives the byte order (negative = little-endian), one whitespace byte, then float32 pixels with
 * rows from BOTTOM to top. We write "PF\n<w> <h>\n-1.0\n" little-endian; the reader accepts either
 * byte order and grey maps (expanded to RGB). The scale's magnitude is not applied (common practice).
 */
import { ImageFormatError, type FloatImage } from "./image";

const FORMAT = "PFM";

export function encodePfm(img: FloatImage): Uint8Array {
  const { width: w, height: h, data } = img;
  if (!Number.isInteger(w) || !Number.isInteger(h) || w < 1 || h < 1) throw new Error(`encodePfm: invalid size ${w}×${h}`);
  if (data.length < w * h * 3) throw new Error(`encodePfm: data has ${data.length} floats, need ${w * h * 3}`);
  const header = `PF\n${w} ${h}\n-1.0\n`;
  const out = new Uint8Array(header.length + w * h * 12);
  for (let i = 0; i < header.length; i++) out[i] = header.charCodeAt(i);
  const view = new DataView(out.buffer, header.length);
  const rowFloats = w * 3;
  for (let y = 0; y < h; y++) {
    const src = (h - 1 - y) * rowFloats; // file row 0 is the bottom of the picture
    const dst = y * rowFloats * 4;
    for (let k = 0; k < rowFloats; k++) view.setFloat32(dst + k * 4, data[src + k]!, true);
  }
  return out;
}

const isSpace = (b: number | undefined) => b === 0x20 || b === 0x0a || b === 0x0d || b === 0x09;

export function decodePfm(bytes: Uint8Array): FloatImage {
  let pos = 0;
  const token = (): { text: string; start: number } => {
    while (pos < bytes.length && isSpace(bytes[pos])) pos++;
    const start = pos;
    while (pos < bytes.length && !isSpace(bytes[pos])) pos++;
    if (start === pos) throw new ImageFormatError(FORMAT, pos, "header ends early");
    let text = "";
    for (let i = start; i < pos && i < start + 32; i++) text += String.fromCharCode(bytes[i]!);
    return { text, start };
  };
  const magic = token();
  if (magic.text !== "PF" && magic.text !== "Pf") throw new ImageFormatError(FORMAT, 0, `not a PFM file (starts with "${magic.text.slice(0, 8)}", expected "PF" or "Pf")`);
  const channels = magic.text === "PF" ? 3 : 1;
  const wt = token();
  const ht = token();
  const w = Number(wt.text);
  const h = Number(ht.text);
  if (!/^\d+$/.test(wt.text) || w < 1) throw new ImageFormatError(FORMAT, wt.start, `invalid width "${wt.text}"`);
  if (!/^\d+$/.test(ht.text) || h < 1) throw new ImageFormatError(FORMAT, ht.start, `invalid height "${ht.text}"`);
  const st = token();
  const scale = Number(st.text);
  if (!Number.isFinite(scale) || scale === 0) throw new ImageFormatError(FORMAT, st.start, `invalid scale "${st.text}"`);
  if (!isSpace(bytes[pos])) throw new ImageFormatError(FORMAT, pos, "expected one whitespace byte after the scale");
  pos++;
  const little = scale < 0;
  const expected = w * h * channels * 4;
  if (bytes.length - pos !== expected) {
    throw new ImageFormatError(FORMAT, pos, `pixel data is ${bytes.length - pos} bytes, a ${w}×${h} ${channels === 3 ? "RGB" : "grey"} map needs ${expected}`);
  }
  const view = new DataView(bytes.buffer, bytes.byteOffset + pos, expected);
  const data = new Float32Array(w * h * 3);
  for (let y = 0; y < h; y++) {
    const outRow = (h - 1 - y) * w * 3;
    for (let x = 0; x < w; x++) {
      const o = outRow + x * 3;
      if (channels === 3) {
        const s = (y * w + x) * 12;
        data[o] = view.getFloat32(s, little);
        data[o + 1] = view.getFloat32(s + 4, little);
        data[o + 2] = view.getFloat32(s + 8, little);
      } else {
        const v = view.getFloat32((y * w + x) * 4, little);
        data[o] = data[o + 1] = data[o + 2] = v;
      }
    }
  }
  return { width: w, height: h, data };
}

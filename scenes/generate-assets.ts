/**
 * Generates the example scenes' assets (run `npx tsx scenes/generate-assets.ts`; the output is committed
 * and a test checks it is current):
 *   meshes/wren-kettle.obj   the Wren kettle: lathed body with lid and knob, spout, handle (with vn)
 *   meshes/glass-carafe.obj  the studio's glass carafe: a lathed hollow vessel with wall thickness
 *   maps/lightbox.hdr        a small equirectangular studio lightbox: two softboxes, a ceiling strip, floor bounce
 * Everything is computed from closed-form profiles, so the files are byte-identical on every run.
 */
import { writeFileSync, mkdirSync } from "node:fs";
import { fileURLToPath } from "node:url";
import { encodeHdr } from "../tracer/io/rgbe";

type V3 = [number, number, number];

class ObjWriter {
  lines: string[] = [];
  vCount = 0;
  nCount = 0;
  comment(s: string) {
    this.lines.push(`# ${s}`);
  }
  object(name: string) {
    this.lines.push(`o ${name}`);
  }
  v(p: V3): number {
    this.lines.push(`v ${fmt(p[0])} ${fmt(p[1])} ${fmt(p[2])}`);
    return ++this.vCount;
  }
  vn(n: V3): number {
    const l = Math.hypot(n[0], n[1], n[2]) || 1;
    this.lines.push(`vn ${fmt(n[0] / l)} ${fmt(n[1] / l)} ${fmt(n[2] / l)}`);
    return ++this.nCount;
  }
  /** A face with per-corner normals (v//vn). */
  f(corners: [number, number][]) {
    this.lines.push("f " + corners.map(([v, n]) => `${v}//${n}`).join(" "));
  }
  text(): string {
    return this.lines.join("\n") + "\n";
  }
}

function fmt(x: number): string {
  const s = x.toFixed(5);
  return s === "-0.00000" ? "0.00000" : s;
}

/**
 * Surface of revolution about +Y of a profile [r, y] running from the axis (r = 0) back to the axis,
 * so the surface is closed. Normals come from the profile's 2-D normals, averaged at interior points.
 */
function lathe(w: ObjWriter, profile: [number, number][], segments: number, offset: V3 = [0, 0, 0]) {
  const n = profile.length;
  // outward 2-D normal per profile segment, walking the profile so that the outside is on the right
  const segN: [number, number][] = [];
  for (let i = 0; i + 1 < n; i++) {
    const [r0, y0] = profile[i]!;
    const [r1, y1] = profile[i + 1]!;
    const dr = r1 - r0;
    const dy = y1 - y0;
    const l = Math.hypot(dr, dy) || 1;
    segN.push([dy / l, -dr / l]);
  }
  const pointN = profile.map((_, i) => {
    const a = segN[Math.max(0, i - 1)]!;
    const b = segN[Math.min(segN.length - 1, i)]!;
    return [a[0] + b[0], a[1] + b[1]] as [number, number];
  });
  const ring: { v: number; n: number }[][] = [];
  for (let i = 0; i < n; i++) {
    const [r, y] = profile[i]!;
    const row: { v: number; n: number }[] = [];
    if (r === 0) {
      const v = w.v([offset[0], y + offset[1], offset[2]]);
      const nn = w.vn([0, Math.sign(pointN[i]![1]) || 1, 0]);
      for (let s = 0; s < segments; s++) row.push({ v, n: nn });
    } else {
      for (let s = 0; s < segments; s++) {
        const t = (2 * Math.PI * s) / segments;
        const c = Math.cos(t);
        const sn = Math.sin(t);
        const v = w.v([r * c + offset[0], y + offset[1], r * sn + offset[2]]);
        const nn = w.vn([pointN[i]![0] * c, pointN[i]![1], pointN[i]![0] * sn]);
        row.push({ v, n: nn });
      }
    }
    ring.push(row);
  }
  for (let i = 0; i + 1 < n; i++) {
    for (let s = 0; s < segments; s++) {
      const s1 = (s + 1) % segments;
      const a = ring[i]![s]!;
      const b = ring[i]![s1]!;
      const c = ring[i + 1]![s1]!;
      const d = ring[i + 1]![s]!;
      // winding so that the front face looks outward (counter-clockwise seen from outside)
      if (profile[i]![0] === 0) w.f([[a.v, a.n], [d.v, d.n], [c.v, c.n]]);
      else if (profile[i + 1]![0] === 0) w.f([[a.v, a.n], [d.v, d.n], [b.v, b.n]]);
      else w.f([[a.v, a.n], [d.v, d.n], [c.v, c.n], [b.v, b.n]]);
    }
  }
}

/** A tube along a polyline of centres with per-point radius, capped at both ends. */
function tube(w: ObjWriter, centres: V3[], radii: number[], segments: number, up: V3) {
  const rings: { v: number; n: number }[][] = [];
  for (let i = 0; i < centres.length; i++) {
    const p = centres[i]!;
    const prev = centres[Math.max(0, i - 1)]!;
    const next = centres[Math.min(centres.length - 1, i + 1)]!;
    const t = norm(sub(next, prev));
    const a = norm(cross(t, up));
    const b = cross(a, t);
    const row: { v: number; n: number }[] = [];
    for (let s = 0; s < segments; s++) {
      const ang = (2 * Math.PI * s) / segments;
      const d: V3 = add(scale(a, Math.cos(ang)), scale(b, Math.sin(ang)));
      row.push({ v: w.v(add(p, scale(d, radii[i]!))), n: w.vn(d) });
    }
    rings.push(row);
  }
  for (let i = 0; i + 1 < rings.length; i++) {
    for (let s = 0; s < segments; s++) {
      const s1 = (s + 1) % segments;
      const q = [rings[i]![s]!, rings[i + 1]![s]!, rings[i + 1]![s1]!, rings[i]![s1]!];
      w.f(q.map((c) => [c.v, c.n] as [number, number]));
    }
  }
  for (const [end, sign] of [[0, -1], [rings.length - 1, 1]] as const) {
    const c = centres[end]!;
    const t = norm(sub(centres[Math.min(end + 1, centres.length - 1)]!, centres[Math.max(end - 1, 0)]!));
    const cn = w.vn(scale(t, sign));
    const cv = w.v(c);
    for (let s = 0; s < segments; s++) {
      const s1 = (s + 1) % segments;
      const a = rings[end]![s]!.v;
      const b = rings[end]![s1]!.v;
      w.f(sign > 0 ? [[cv, cn], [b, cn], [a, cn]] : [[cv, cn], [a, cn], [b, cn]]);
    }
  }
}

const sub = (a: V3, b: V3): V3 => [a[0] - b[0], a[1] - b[1], a[2] - b[2]];
const add = (a: V3, b: V3): V3 => [a[0] + b[0], a[1] + b[1], a[2] + b[2]];
const scale = (a: V3, k: number): V3 => [a[0] * k, a[1] * k, a[2] * k];
const cross = (a: V3, b: V3): V3 => [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
const norm = (a: V3): V3 => scale(a, 1 / (Math.hypot(a[0], a[1], a[2]) || 1));

export function wrenKettleObj(): string {
  const w = new ObjWriter();
  w.comment("Wren kettle, Harrow Lane Studio. Metres, +Y up, base centred on the origin. Generated by scenes/generate-assets.ts.");
  w.object("body");
  // base → belly → shoulder → lid → knob, back to the axis
  lathe(
    w,
    [
      [0, 0],
      [0.08, 0],
      [0.098, 0.012],
      [0.108, 0.045],
      [0.11, 0.08],
      [0.104, 0.12],
      [0.088, 0.152],
      [0.062, 0.172],
      [0.058, 0.176],
      [0.05, 0.184],
      [0.03, 0.194],
      [0.012, 0.198],
      [0.01, 0.205],
      [0.016, 0.214],
      [0.012, 0.224],
      [0, 0.226],
    ],
    40,
  );
  w.object("spout");
  const spout: V3[] = [];
  const spoutR: number[] = [];
  for (let i = 0; i <= 8; i++) {
    const t = i / 8;
    spout.push([0.085 + 0.1 * t, 0.06 + 0.09 * t + 0.03 * t * t, 0]);
    spoutR.push(0.024 - 0.013 * t);
  }
  tube(w, spout, spoutR, 16, [0, 0, 1]);
  w.object("handle");
  const handle: V3[] = [];
  for (let i = 0; i <= 16; i++) {
    const a = (-75 + (150 * i) / 16) * (Math.PI / 180);
    handle.push([-0.1 - 0.055 * Math.cos(a), 0.1 + 0.055 * Math.sin(a), 0]);
  }
  tube(w, handle, handle.map(() => 0.011), 12, [0, 0, 1]);
  return w.text();
}

export function glassCarafeObj(): string {
  const w = new ObjWriter();
  w.comment("Glass carafe, Harrow Lane Studio. Hollow vessel, 4 mm walls. Metres, +Y up. Generated by scenes/generate-assets.ts.");
  w.object("carafe");
  const outer: [number, number][] = [
    [0, 0],
    [0.052, 0],
    [0.06, 0.01],
    [0.064, 0.05],
    [0.06, 0.1],
    [0.045, 0.15],
    [0.03, 0.19],
    [0.028, 0.23],
    [0.033, 0.25],
  ];
  const inner: [number, number][] = [
    [0.029, 0.25],
    [0.024, 0.232],
    [0.026, 0.19],
    [0.041, 0.15],
    [0.056, 0.1],
    [0.06, 0.05],
    [0.056, 0.014],
    [0.048, 0.008],
    [0, 0.008],
  ];
  lathe(w, [...outer, ...inner], 48);
  return w.text();
}

/**
 * 128×64 equirectangular lightbox. Direction of pixel (x, y): azimuth φ = 2π (x + ½)/W, elevation
 * θ = π/2 − π (y + ½)/H (row 0 is straight up). Two square softboxes at ±60° azimuth, 35° elevation,
 * a long ceiling strip, warm grey walls and a darker floor.
 */
export function lightboxHdr(): Uint8Array {
  const W = 128;
  const H = 64;
  const data = new Float32Array(W * H * 3);
  const deg = Math.PI / 180;
  for (let y = 0; y < H; y++) {
    const el = Math.PI / 2 - (Math.PI * (y + 0.5)) / H;
    for (let x = 0; x < W; x++) {
      const az = (2 * Math.PI * (x + 0.5)) / W;
      let rgb: V3 = el >= 0 ? [0.32, 0.3, 0.28] : [0.08, 0.075, 0.07];
      for (const [c, tint] of [
        [60, [14, 13.5, 12.5]],
        [300, [9, 9.5, 10.5]],
      ] as const) {
        let dAz = Math.abs(az / deg - c);
        dAz = Math.min(dAz, 360 - dAz);
        if (dAz < 12 && Math.abs(el / deg - 35) < 12) rgb = [tint[0], tint[1], tint[2]];
      }
      if (el / deg > 70 && Math.abs(Math.sin(az)) < 0.12) rgb = [6, 6, 6];
      data.set(rgb, (y * W + x) * 3);
    }
  }
  return encodeHdr({ width: W, height: H, data });
}

export const GENERATED_ASSETS: { path: string; bytes: () => Uint8Array }[] = [
  { path: "meshes/wren-kettle.obj", bytes: () => new TextEncoder().encode(wrenKettleObj()) },
  { path: "meshes/glass-carafe.obj", bytes: () => new TextEncoder().encode(glassCarafeObj()) },
  { path: "maps/lightbox.hdr", bytes: lightboxHdr },
];

const isMain = process.argv[1] !== undefined && fileURLToPath(import.meta.url) === process.argv[1];
if (isMain) {
  for (const a of GENERATED_ASSETS) {
    const target = fileURLToPath(new URL(`./${a.path}`, import.meta.url));
    mkdirSync(fileURLToPath(new URL(`./${a.path.split("/")[0]}/`, import.meta.url)), { recursive: true });
    const bytes = a.bytes();
    writeFileSync(target, bytes);
    console.log(`wrote ${a.path} (${bytes.length} bytes)`);
  }
}

/**
 * Deterministic generator of broken scenes for the bad-input fuzz test. Case `n` is a pure function of
 * (n, the base scenes): its random numbers come from seedrandom seeded with "tracewell-scene-fuzz/<n>",
 * so any failing case can be replayed alone by its number.
 *
 * A case starts from a valid scene (the repository's scenes/*.json and the small hand-made ones below),
 * applies one to three mutations at randomly chosen places in the JSON tree, and is sent either as a
 * parsed value (which can carry NaN, Infinity, -0 and prototype-looking keys) or as JSON text (optionally
 * corrupted at the character level, which must produce a line and column).
 */
import { existsSync, readdirSync, readFileSync } from "node:fs";
import { dirname, join } from "node:path";
import seedrandom from "seedrandom";
import { encodeHdr } from "../../../../tracer/io/rgbe";

export type Json = null | boolean | number | string | Json[] | { [key: string]: Json };
type Path = (string | number)[];

export type BaseScene = { name: string; scene: Json; assets: Map<string, Uint8Array> };

export type FuzzCase = {
  index: number;
  base: string;
  mutations: string[];
  /** "value": the mutated object itself; "text": JSON text (possibly corrupted). */
  mode: "value" | "text";
  input: unknown;
  assets: Map<string, Uint8Array>;
};

// ---------------------------------------------------------------------------------------------
// base scenes

/** Our own tiny mesh: a tetrahedron "pebble" with normals, 4 faces. */
export const PEBBLE_OBJ = [
  "# pebble: a tetrahedron for fuzzing",
  "v 0 0 0",
  "v 1 0 0",
  "v 0 1 0",
  "v 0 0 1",
  "vn 0 0 -1",
  "vn 0 -1 0",
  "vn -1 0 0",
  "vn 0.577 0.577 0.577",
  "f 1//1 3//1 2//1",
  "f 1//2 2//2 4//2",
  "f 1//3 4//3 3//3",
  "f 2/1/4 3/1/4 4/1/4",
  "",
].join("\n");

/** A 16×8 equirectangular map: warm above the horizon, dark ground, one bright spot (RLE-encoded). */
export function makeLightboxHdr(): Uint8Array {
  const w = 16;
  const h = 8;
  const data = new Float32Array(w * h * 3);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const i = (y * w + x) * 3;
      const up = y < h / 2 ? 1 : 0.1;
      const spot = x === 3 && y === 1 ? 40 : 0;
      data[i] = up * 0.9 + spot;
      data[i + 1] = up * 0.8 + spot;
      data[i + 2] = up * 0.7 + spot;
    }
  }
  return encodeHdr({ width: w, height: h, data });
}

const enc = new TextEncoder();

export function handMadeScenes(): BaseScene[] {
  const meshRef = "meshes/pebble.obj";
  const mapRef = "maps/lightbox.hdr";
  const shaMesh = "sha256:" + "ab".repeat(32);
  const assets = new Map<string, Uint8Array>([
    [meshRef, enc.encode(PEBBLE_OBJ)],
    [shaMesh, enc.encode(PEBBLE_OBJ)],
    [mapRef, makeLightboxHdr()],
  ]);
  const kettleStudio: Json = {
    format: "tracewell.scene/1",
    name: "Wren kettle on the long table",
    notes: "Fuzz base: every shape, every material, every light kind.",
    image: { width: 32, height: 24 },
    camera: { position: [0, 1.2, 4], target: [0, 0.5, 0], up: [0, 1, 0], fovY: 40, aperture: 0.01, focusDistance: 4, shutter: [0, 1] },
    render: { integrator: "path", spp: 4, seed: 7, maxDepth: 6, clamp: 50 },
    display: { exposure: 0.5, toneMap: "filmic" },
    environment: { type: "sky", zenith: [0.2, 0.3, 0.6], horizon: [0.8, 0.8, 0.9], ground: [0.1, 0.1, 0.1] },
    materials: {
      glaze: { type: "diffuse", albedo: [0.8, 0.7, 0.6] },
      steel: { type: "metal", reflectance: [0.9, 0.9, 0.9], roughness: 0.3 },
      carafe: { type: "glass", ior: 1.5, roughness: 0.05, absorption: [0.1, 0.2, 0.3] },
      oak: { type: "diffuse", albedo: [0.5, 0.35, 0.2] },
    },
    objects: [
      { id: "kettle", shape: { type: "sphere", center: [0, 0.5, 0], radius: 0.5 }, material: "glaze" },
      { id: "table", shape: { type: "rect", center: [0, 0, 0], u: [4, 0, 0], v: [0, 0, -4] }, material: "oak" },
      { id: "coaster", shape: { type: "disk", center: [1, 0.01, 0], normal: [0, 1, 0], radius: 0.3 }, material: "steel" },
      { id: "crate", shape: { type: "box", min: [-1.5, 0, -0.5], max: [-1, 0.5, 0] }, material: "carafe", motion: { velocity: [0.1, 0, 0] } },
      { id: "pebble", shape: { type: "mesh", asset: meshRef, translate: [0.8, 0, 0.5], rotate: [0, 30, 0], scale: [0.2, 0.2, 0.2] }, material: "steel" },
    ],
    lights: [
      { id: "key", type: "area", shape: { type: "rect", center: [0, 3, 0], u: [1, 0, 0], v: [0, 0, 1] }, radiance: [10, 9, 8], group: "key" },
      { id: "fill", type: "area", shape: { type: "disk", center: [-2, 2, 2], normal: [1, -1, -1], radius: 0.4 }, power: 30, group: "fill", visible: false },
      { id: "rim", type: "area", shape: { type: "sphere", center: [2, 2, -2], radius: 0.2 }, power: [5, 5, 8], group: "rim" },
      { id: "bulb", type: "point", position: [0, 2, 2], intensity: [2, 2, 2] },
    ],
  };
  const carafeLightbox: Json = {
    format: "tracewell.scene/1",
    name: "Glass carafe on a lightbox",
    image: { width: 16, height: 16 },
    camera: { position: [0, 0.4, 2], target: [0, 0.3, 0], fovY: 30 },
    render: { integrator: "whitted", spp: 2, maxDepth: 12 },
    environment: { type: "map", asset: mapRef, scale: 1.5, rotationY: 90 },
    materials: { carafe: { type: "glass", ior: 1.52 }, box: { type: "diffuse", albedo: [0.95, 0.95, 0.95] } },
    objects: [
      { id: "carafe", shape: { type: "mesh", asset: shaMesh, scale: 0.3 }, material: "carafe" },
      { id: "lightbox", shape: { type: "box", min: [-0.5, -0.1, -0.5], max: [0.5, 0, 0.5] }, material: "box" },
    ],
  };
  const osierDesk: Json = {
    format: "tracewell.scene/1",
    name: "Osier lamp on the desk",
    image: { width: 12, height: 8 },
    camera: { position: [1, 1, 1], target: [0, 0.3, 0], fovY: 60 },
    render: { integrator: "direct", spp: 1 },
    display: { toneMap: "reinhard" },
    environment: { type: "uniform", radiance: [0.05, 0.05, 0.05] },
    materials: { desk: { type: "diffuse", albedo: [0.4, 0.4, 0.4] }, shade: { type: "metal", reflectance: [0.7, 0.6, 0.3] } },
    objects: [
      { id: "desk", shape: { type: "box", min: [-1, -0.05, -1], max: [1, 0, 1] }, material: "desk" },
      { id: "shade", shape: { type: "sphere", center: [0, 0.5, 0], radius: 0.1 }, material: "shade" },
    ],
    lights: [{ id: "bulb", type: "area", shape: { type: "disk", center: [0, 0.39, 0], normal: [0, -1, 0], radius: 0.05 }, power: 8, group: "lamp" }],
  };
  return [
    { name: "hand:kettle-studio", scene: kettleStudio, assets },
    { name: "hand:carafe-lightbox", scene: carafeLightbox, assets },
    { name: "hand:osier-desk", scene: osierDesk, assets },
  ];
}

function collectAssetRefs(node: Json, out: Set<string>): void {
  if (Array.isArray(node)) node.forEach((n) => collectAssetRefs(n, out));
  else if (node && typeof node === "object") {
    for (const [k, v] of Object.entries(node)) {
      if (k === "asset" && typeof v === "string") out.add(v);
      else collectAssetRefs(v, out);
    }
  }
}

/** The repository's example scenes, with the asset files they name (relative to scenes/). */
export function repositoryScenes(root: string): BaseScene[] {
  const dir = join(root, "scenes");
  if (!existsSync(dir)) return [];
  const out: BaseScene[] = [];
  for (const file of readdirSync(dir).filter((f) => f.endsWith(".json")).sort()) {
    const text = readFileSync(join(dir, file), "utf8");
    let scene: Json;
    try {
      scene = JSON.parse(text) as Json;
    } catch {
      continue; // a broken example is the scene test's business, not the fuzzer's
    }
    const refs = new Set<string>();
    collectAssetRefs(scene, refs);
    const assets = new Map<string, Uint8Array>();
    for (const ref of refs) {
      const p = join(dirname(join(dir, file)), ref);
      if (!ref.startsWith("sha256:") && existsSync(p)) assets.set(ref, new Uint8Array(readFileSync(p)));
    }
    out.push({ name: `scenes/${file}`, scene, assets });
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// mutations

type Rng = () => number;

function pick<T>(rng: Rng, items: readonly T[]): T {
  return items[Math.floor(rng() * items.length)]!;
}

function clone(v: Json): Json {
  return JSON.parse(JSON.stringify(v)) as Json;
}

/** Every path in the tree (excluding the root), with the value found there. */
function allPaths(root: Json): Path[] {
  const out: Path[] = [];
  const walk = (node: Json, path: Path) => {
    if (Array.isArray(node)) node.forEach((n, i) => (out.push([...path, i]), walk(n, [...path, i])));
    else if (node && typeof node === "object") for (const [k, v] of Object.entries(node)) out.push([...path, k]), walk(v, [...path, k]);
  };
  walk(root, []);
  return out;
}

function getAt(root: Json, path: Path): Json {
  let cur: Json = root;
  for (const seg of path) cur = (cur as Record<string | number, Json>)[seg] as Json;
  return cur;
}

function parentOf(root: Json, path: Path): { parent: Json[] | Record<string, Json>; key: string | number } {
  return { parent: getAt(root, path.slice(0, -1)) as Json[] | Record<string, Json>, key: path[path.length - 1]! };
}

function setAt(root: Json, path: Path, value: unknown): void {
  const { parent, key } = parentOf(root, path);
  // defineProperty: a key such as "__proto__" must stay an own data property
  Object.defineProperty(parent, key, { value, enumerable: true, writable: true, configurable: true });
}

const ENUM_WORDS = [
  "path", "whitted", "direct", "none", "reinhard", "filmic", "uniform", "sky", "map", "diffuse", "metal", "glass",
  "sphere", "rect", "disk", "box", "mesh", "area", "point", "environment", "default",
  // near misses and hostile strings
  "Path", "SPHERE", "sphere ", "", "spot", "emissive", "constructor", "__proto__", "toString", "hasOwnProperty",
  "tracewell.scene/2", "tracewell.scene/1 ", "null", "NaN", "1e309", "-0",
] as const;

const HOSTILE_STRINGS = [
  "", " ", "no-such-id", "x".repeat(70), "a b", "ümlaut", "../../etc/passwd", "/etc/passwd", "C:\\windows\\x.obj",
  "file:///etc/passwd", "https://example.invalid/x.obj", "sha256:", "sha256:" + "A".repeat(64), "sha256:" + "0".repeat(63),
  "meshes/../x.obj", "meshes//x.obj", "meshes/missing.obj", "maps/missing.hdr", "\u0000", "line\nbreak", "1.5", "[1,2,3]",
  "\ud800", "🙂".repeat(100), "x".repeat(20_001),
] as const;

function hugeArray(rng: Rng): unknown[] {
  const n = pick(rng, [1_000, 10_001, 30_000]);
  const kind = Math.floor(rng() * 6);
  // fresh items: a later mutation inside one item must not change all of them
  const makers: (() => unknown)[] = [() => 0, () => 1e308, () => "x", () => null, () => ({}), () => [0, 0, 0]];
  return Array.from({ length: n }, makers[kind]!);
}

function deepNest(rng: Rng): unknown {
  const depth = pick(rng, [100, 300, 2_000]);
  let v: unknown = pick<unknown>(rng, [0, {}, []]);
  for (let i = 0; i < depth; i++) v = rng() < 0.5 ? [v] : { a: v };
  return v;
}

function hostileValue(rng: Rng): { value: unknown; label: string } {
  const r = rng();
  if (r < 0.35) {
    const n = pick(rng, [
      NaN, Infinity, -Infinity, 1e308, -1e308, 3.5e38, 1e39, -1e39, 1e-320, -0, -1, 0, 0.5, 1.5, 2 ** 31, 2 ** 32, 2 ** 53 + 2,
      -(2 ** 53), 8193, 65_537, 4096, 1e6, 179.9999, 180, 1e-9, -1e-9, Number.MIN_VALUE, Number.EPSILON,
    ]);
    return { value: n, label: `number ${Object.is(n, -0) ? "-0" : String(n)}` };
  }
  if (r < 0.55) {
    const s = pick(rng, HOSTILE_STRINGS);
    return { value: s, label: `string(${s.length}) ${JSON.stringify(s.slice(0, 20))}` };
  }
  if (r < 0.65) {
    const s = pick(rng, ENUM_WORDS);
    return { value: s, label: `enum-ish ${JSON.stringify(s)}` };
  }
  if (r < 0.85) {
    const v = pick<unknown>(rng, [true, false, null, [], {}, [1, 2], [1, 2, 3, 4], [NaN, 0, 0], [0, 0, 0], [1, 1, 1], ["1", "2", "3"], { type: "sphere" }]);
    return { value: v, label: `value ${JSON.stringify(v)}` };
  }
  if (r < 0.9) return { value: hugeArray(rng), label: "huge array" };
  return { value: deepNest(rng), label: "deep nesting" };
}

function typo(rng: Rng, key: string): string {
  if (key.length === 0) return "x";
  const i = Math.floor(rng() * key.length);
  switch (Math.floor(rng() * 5)) {
    case 0:
      return key.slice(0, i) + key.slice(i + 1) || "_";
    case 1:
      return key.toUpperCase();
    case 2:
      return key + "s";
    case 3:
      return key.slice(0, i) + key[i]! + key.slice(i);
    default:
      return " " + key;
  }
}

function describe(path: Path): string {
  const s = path.map((p) => (typeof p === "number" ? `[${p}]` : `.${p}`)).join("").replace(/^\./, "");
  return s.length > 100 ? `${s.slice(0, 60)}…(${path.length} levels)` : s;
}

/** Applies one mutation in place and returns a short description of it. */
function mutate(rng: Rng, root: Json): string {
  const paths = allPaths(root);
  if (paths.length === 0) return "nothing to mutate";
  const path = pick(rng, paths);
  const where = describe(path);
  const current = getAt(root, path);
  const { parent, key } = parentOf(root, path);
  const op = rng();

  if (op < 0.1 && !Array.isArray(parent)) {
    delete (parent as Record<string, Json>)[key as string];
    return `delete ${where}`;
  }
  if (op < 0.18 && !Array.isArray(parent)) {
    const newKey = typo(rng, key as string);
    const value = (parent as Record<string, Json>)[key as string];
    delete (parent as Record<string, Json>)[key as string];
    Object.defineProperty(parent, newKey, { value, enumerable: true, writable: true, configurable: true });
    return `rename ${where} → ${JSON.stringify(newKey)}`;
  }
  if (op < 0.22 && current && typeof current === "object" && !Array.isArray(current)) {
    const k = pick(rng, ["extra", "__proto__", "constructor", "Radius", "colour", "prototype"]);
    Object.defineProperty(current, k, { value: 1, enumerable: true, writable: true, configurable: true });
    return `add key ${where}.${k}`;
  }
  if (op < 0.3 && typeof current === "number") {
    const f = pick(rng, [-1, 1e10, 1e-10, 1e300, 0, 1.0000001, 0.5]);
    const v = current * f + (rng() < 0.3 ? 0.5 : 0);
    setAt(root, path, v);
    return `scale ${where} ${current} → ${v}`;
  }
  if (op < 0.36 && Array.isArray(current) && current.length > 0) {
    const copies = pick(rng, [1, 2, 20]);
    for (let i = 0; i < copies; i++) current.push(clone(current[Math.floor(rng() * current.length)]!));
    return `duplicate ${copies} item(s) of ${where}`;
  }
  if (op < 0.4 && Array.isArray(current) && current.length > 0) {
    current.splice(Math.floor(rng() * current.length), 1);
    return `remove an item of ${where}`;
  }
  if (op < 0.47 && typeof current === "string") {
    // references and tags: point at another existing id, an unknown id, or another union member
    const ids = [
      ...Object.keys(((root as Record<string, Json>).materials as Record<string, Json> | undefined) ?? {}),
      ...ENUM_WORDS,
      "no-such-material",
    ];
    const v = pick(rng, ids);
    setAt(root, path, v);
    return `retag ${where} ${JSON.stringify(current)} → ${JSON.stringify(v)}`;
  }
  if (op < 0.52 && typeof current === "number") {
    setAt(root, path, String(current));
    return `stringify ${where}`;
  }
  const h = hostileValue(rng);
  setAt(root, path, h.value);
  return `set ${where} = ${h.label}`;
}

function corruptText(rng: Rng, text: string): { text: string; label: string } {
  const at = Math.floor(rng() * text.length);
  switch (Math.floor(rng() * 6)) {
    case 0:
      return { text: text.slice(0, at), label: `truncate at ${at}` };
    case 1:
      return { text: text.slice(0, at) + text.slice(at + 1), label: `drop char ${at}` };
    case 2: {
      const c = pick(rng, ["{", "}", "[", "]", ",", ":", '"', "\\", "\u0001", "NaN", "Infinity", "-", "1e", "'", "//", "\ufeff"]);
      return { text: text.slice(0, at) + c + text.slice(at), label: `insert ${JSON.stringify(c)} at ${at}` };
    }
    case 3:
      return { text: text + pick(rng, [",", "}", " x", "\n{}"]), label: "trailing garbage" };
    case 4:
      return { text: "[".repeat(pick(rng, [257, 5_000, 100_000])), label: "deep open brackets" };
    default: {
      // a duplicated field: JSON.parse keeps the last silently, the validator must name it
      const m = /"([A-Za-z]+)":\s*([^,{}\[\]]+),/.exec(text.slice(at)) ?? /"([A-Za-z]+)":\s*([^,{}\[\]]+),/.exec(text);
      if (!m) return { text: text.slice(0, at), label: `truncate at ${at}` };
      const i = text.indexOf(m[0]);
      return { text: text.slice(0, i) + m[0] + m[0] + text.slice(i + m[0].length), label: `duplicate field "${m[1]}"` };
    }
  }
}

export function makeCase(index: number, bases: readonly BaseScene[]): FuzzCase {
  const rng = seedrandom(`tracewell-scene-fuzz/${index}`);
  const base = bases[index % bases.length]!;
  const scene = clone(base.scene);
  const mutations: string[] = [];
  // 5% of cases are left unmutated or only lightly changed so the valid path (compile + render) is exercised often too
  const count = rng() < 0.05 ? 0 : 1 + Math.floor(rng() * 3);
  for (let i = 0; i < count; i++) mutations.push(mutate(rng, scene));
  const asText = rng() < 0.4;
  if (!asText) return { index, base: base.name, mutations, mode: "value", input: scene, assets: base.assets };
  let text = rng() < 0.5 ? JSON.stringify(scene, null, 2) : JSON.stringify(scene);
  if (rng() < 0.35) {
    const c = corruptText(rng, text);
    text = c.text;
    mutations.push(c.label);
  }
  return { index, base: base.name, mutations, mode: "text", input: text, assets: base.assets };
}

/**
 * Wavefront OBJ reader for the subset the scene format promises: `v`, `vn` and `f` (v, v/vt, v//vn,
 * v/vt/vn corners; negative indices count back from the latest vertex), polygons fan-triangulated.
 * Everything else a modelling tool writes (vt, o, g, s, usemtl, mtllib, l, p…) is skipped, because a
 * mesh is one shape with the object's one material. Errors carry the 1-based line number.
 */

export type ObjMesh = {
  /** xyz per vertex. */
  positions: Float32Array;
  /** Three vertex indices per triangle. */
  indices: Uint32Array;
  /**
   * xyz per triangle corner (9 numbers per triangle) from `vn`; null if the file has no `vn` lines.
   * Corners of faces written without normals get their triangle's geometric normal.
   */
  normals: Float32Array | null;
};

export type ObjOptions = { maxTriangles?: number };

export class ObjError extends Error {
  readonly line: number;
  constructor(line: number, message: string) {
    super(`line ${line}: ${message}`);
    this.name = "ObjError";
    this.line = line;
  }
}

/** A growable float array; avoids a JS number[] per coordinate for million-triangle meshes. */
class F32List {
  data = new Float32Array(1024);
  length = 0;
  push3(a: number, b: number, c: number): void {
    if (this.length + 3 > this.data.length) {
      const next = new Float32Array(this.data.length * 2);
      next.set(this.data);
      this.data = next;
    }
    this.data[this.length++] = a;
    this.data[this.length++] = b;
    this.data[this.length++] = c;
  }
  toArray(): Float32Array {
    return this.data.slice(0, this.length);
  }
}

class I32List {
  data = new Int32Array(1024);
  length = 0;
  push(a: number): void {
    if (this.length === this.data.length) {
      const next = new Int32Array(this.data.length * 2);
      next.set(this.data);
      this.data = next;
    }
    this.data[this.length++] = a;
  }
}

const NUMBER_TOKEN = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;

function parseCoord(tok: string | undefined, line: number, what: string): number {
  if (tok === undefined) throw new ObjError(line, `${what} is missing`);
  if (!NUMBER_TOKEN.test(tok)) throw new ObjError(line, `${what} ${JSON.stringify(tok)} is not a number`);
  const v = Number(tok);
  if (!Number.isFinite(v)) throw new ObjError(line, `${what} ${tok} is not finite`);
  return v;
}

/** Resolves a 1-based (or negative, relative) OBJ index to 0-based; throws naming the line. */
function resolveIndex(tok: string, count: number, line: number, kind: string): number {
  if (!/^[+-]?\d+$/.test(tok)) throw new ObjError(line, `${kind} index ${JSON.stringify(tok)} is not an integer`);
  const n = Number(tok);
  const idx = n > 0 ? n - 1 : count + n;
  if (n === 0 || idx < 0 || idx >= count) {
    const range = count === 0 ? `no ${kind === "face" ? "vertices" : "normals"} defined yet` : `valid: 1..${count} or -${count}..-1`;
    throw new ObjError(line, `${kind} index ${n} out of range (${range})`);
  }
  return idx;
}

export function parseObj(text: string, opts: ObjOptions = {}): ObjMesh {
  const maxTriangles = opts.maxTriangles ?? Infinity;
  const positions = new F32List();
  const normalsIn = new F32List();
  const indices = new I32List();
  /** Per corner: index into normalsIn (in vectors), or -1 when the corner has no vn. */
  const cornerNormals = new I32List();
  let triangles = 0;
  let anyCornerNormal = false;

  const lines = text.split(/\r\n|\n|\r/);
  const faceV: number[] = [];
  const faceN: number[] = [];
  let pending = "";
  let pendingStart = 0;
  for (let li = 0; li < lines.length; li++) {
    let raw = lines[li]!;
    // A trailing backslash continues the statement on the next line (part of the OBJ format).
    if (raw.endsWith("\\")) {
      if (pending === "") pendingStart = li;
      pending += raw.slice(0, -1) + " ";
      continue;
    }
    let lineNo = li + 1;
    if (pending !== "") {
      raw = pending + raw;
      lineNo = pendingStart + 1;
      pending = "";
    }
    const hash = raw.indexOf("#");
    const content = (hash >= 0 ? raw.slice(0, hash) : raw).trim();
    if (content === "") continue;
    const toks = content.split(/\s+/);
    const kw = toks[0];
    if (kw === "v") {
      if (toks.length < 4) throw new ObjError(lineNo, `vertex needs 3 coordinates, got ${toks.length - 1}`);
      positions.push3(parseCoord(toks[1], lineNo, "x"), parseCoord(toks[2], lineNo, "y"), parseCoord(toks[3], lineNo, "z"));
    } else if (kw === "vn") {
      if (toks.length < 4) throw new ObjError(lineNo, `normal needs 3 coordinates, got ${toks.length - 1}`);
      normalsIn.push3(parseCoord(toks[1], lineNo, "x"), parseCoord(toks[2], lineNo, "y"), parseCoord(toks[3], lineNo, "z"));
    } else if (kw === "f") {
      const n = toks.length - 1;
      if (n < 3) throw new ObjError(lineNo, `face needs at least 3 vertices, got ${n}`);
      faceV.length = 0;
      faceN.length = 0;
      const vCount = positions.length / 3;
      const nCount = normalsIn.length / 3;
      for (let k = 1; k <= n; k++) {
        const parts = toks[k]!.split("/");
        if (parts.length > 3 || parts[0] === "") throw new ObjError(lineNo, `face corner ${JSON.stringify(toks[k])} is malformed (expected v, v/vt, v//vn or v/vt/vn)`);
        faceV.push(resolveIndex(parts[0]!, vCount, lineNo, "face"));
        const nTok = parts[2];
        if (nTok !== undefined && nTok !== "") {
          faceN.push(resolveIndex(nTok, nCount, lineNo, "normal"));
          anyCornerNormal = true;
        } else faceN.push(-1);
      }
      const tris = n - 2;
      if (triangles + tris > maxTriangles) throw new ObjError(lineNo, `more than ${maxTriangles} triangles`);
      for (let k = 1; k + 1 < n; k++) {
        indices.push(faceV[0]!);
        indices.push(faceV[k]!);
        indices.push(faceV[k + 1]!);
        cornerNormals.push(faceN[0]!);
        cornerNormals.push(faceN[k]!);
        cornerNormals.push(faceN[k + 1]!);
      }
      triangles += tris;
    }
    // Other statements are valid OBJ that a single-material mesh does not need.
  }
  if (pending !== "") throw new ObjError(pendingStart + 1, "line continuation (\\) at the end of the file");
  if (triangles === 0) throw new ObjError(lines.length, "the file has no faces");

  const pos = positions.toArray();
  const idx = new Uint32Array(indices.data.buffer.slice(0, indices.length * 4));
  let normals: Float32Array | null = null;
  if (normalsIn.length > 0 && anyCornerNormal) {
    normals = new Float32Array(triangles * 9);
    const nv = normalsIn.data;
    for (let t = 0; t < triangles; t++) {
      let gx = 0;
      let gy = 0;
      let gz = 0;
      let haveGeometric = false;
      for (let c = 0; c < 3; c++) {
        const ni = cornerNormals.data[t * 3 + c]!;
        const o = t * 9 + c * 3;
        if (ni >= 0) {
          normals[o] = nv[ni * 3]!;
          normals[o + 1] = nv[ni * 3 + 1]!;
          normals[o + 2] = nv[ni * 3 + 2]!;
        } else {
          if (!haveGeometric) {
            const a = idx[t * 3]! * 3;
            const b = idx[t * 3 + 1]! * 3;
            const d = idx[t * 3 + 2]! * 3;
            const e1x = pos[b]! - pos[a]!, e1y = pos[b + 1]! - pos[a + 1]!, e1z = pos[b + 2]! - pos[a + 2]!;
            const e2x = pos[d]! - pos[a]!, e2y = pos[d + 1]! - pos[a + 1]!, e2z = pos[d + 2]! - pos[a + 2]!;
            gx = e1y * e2z - e1z * e2y;
            gy = e1z * e2x - e1x * e2z;
            gz = e1x * e2y - e1y * e2x;
            const len = Math.hypot(gx, gy, gz) || 1;
            gx /= len;
            gy /= len;
            gz /= len;
            haveGeometric = true;
          }
          normals[o] = gx;
          normals[o + 1] = gy;
          normals[o + 2] = gz;
        }
      }
    }
  }
  return { positions: pos, indices: idx, normals };
}

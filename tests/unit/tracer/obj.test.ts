import { describe, expect, it } from "vitest";
import { OBJLoader } from "three/examples/jsm/loaders/OBJLoader.js";
import type { BufferGeometry, Mesh } from "three";
import { parseObj, ObjError } from "../../../tracer/geometry/obj";

/** Triangle corners as plain [x,y,z] lists, in file order. */
function corners(mesh: { positions: Float32Array; indices: Uint32Array }): number[][] {
  return Array.from(mesh.indices, (i) => [mesh.positions[i * 3]!, mesh.positions[i * 3 + 1]!, mesh.positions[i * 3 + 2]!]);
}

function errorOf(text: string, opts?: { maxTriangles?: number }): ObjError {
  try {
    parseObj(text, opts);
  } catch (e) {
    if (e instanceof ObjError) return e;
    throw e;
  }
  throw new Error("expected an ObjError");
}

// A hexagonal lid of the Wren kettle with a quad side, normals on some faces and every corner syntax.
const LID = `# Wren kettle lid (Harrow Lane Studio test piece)
o lid
v 1 0 0
v 0.5 0 0.8660254
v -0.5 0 0.8660254
v -1 0 0
v -0.5 0 -0.8660254
v 0.5 0 -0.8660254
vt 0 0
vn 0 1 0
vn 0 -1 0
usemtl glaze
s 1
f 1//1 2//1 3//1 4//1 5//1 6//1
v 1 -0.2 0
v 0.5 -0.2 0.8660254
f -2/1 -1/1 2/1 1/1
f 7 8 \\
  2
`;

describe("OBJ reader", () => {
  it("fan-triangulates polygons and resolves negative indices (Wavefront OBJ spec, Appendix B1 of the Advanced Visualizer manual: negative = relative to the latest vertex; value from memory)", () => {
    const m = parseObj(LID);
    expect(m.positions.length).toBe(8 * 3);
    expect(Array.from(m.indices)).toEqual([
      0, 1, 2, 0, 2, 3, 0, 3, 4, 0, 4, 5, // hexagon fan from corner 1
      6, 7, 1, 6, 1, 0, // quad written with -2, -1 after 8 vertices
      6, 7, 1, // continued line
    ]);
  });

  it("matches three.js OBJLoader (an independent general-purpose parser) corner for corner", () => {
    const group = new OBJLoader().parse(LID);
    const ref = ((group.children[0] as Mesh).geometry as BufferGeometry).getAttribute("position");
    const ours = corners(parseObj(LID));
    expect(ref.count).toBe(ours.length);
    for (let i = 0; i < ref.count; i++) {
      expect(ours[i]![0]).toBeCloseTo(ref.getX(i), 6);
      expect(ours[i]![1]).toBeCloseTo(ref.getY(i), 6);
      expect(ours[i]![2]).toBeCloseTo(ref.getZ(i), 6);
    }
  });

  it("keeps vn per corner and gives un-normalled faces their geometric normal", () => {
    const m = parseObj(LID);
    expect(m.normals).not.toBeNull();
    const n = m.normals!;
    expect(n.length).toBe(7 * 9);
    for (let t = 0; t < 4; t++) expect(Array.from(n.subarray(t * 9, t * 9 + 9))).toEqual([0, 1, 0, 0, 1, 0, 0, 1, 0]);
    // triangle 6,7,1 (0-based) = (1,-.2,0),(.5,-.2,.866),(.5,0,.866): normal ∝ e1 × e2, unit length
    const g = Array.from(n.subarray(4 * 9, 4 * 9 + 3));
    expect(Math.hypot(g[0]!, g[1]!, g[2]!)).toBeCloseTo(1, 6);
    const e1 = [-0.5, 0, 0.8660254];
    const e2 = [-0.5, 0.2, 0.8660254];
    const c = [e1[1]! * e2[2]! - e1[2]! * e2[1]!, e1[2]! * e2[0]! - e1[0]! * e2[2]!, e1[0]! * e2[1]! - e1[1]! * e2[0]!];
    const cl = Math.hypot(c[0]!, c[1]!, c[2]!);
    for (let k = 0; k < 3; k++) expect(g[k]!).toBeCloseTo(c[k]! / cl, 5);
  });

  it("returns null normals when the file has no vn", () => {
    const m = parseObj("v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\n");
    expect(m.normals).toBeNull();
    expect(Array.from(m.indices)).toEqual([0, 1, 2]);
    expect(Array.from(m.positions)).toEqual([0, 0, 0, 1, 0, 0, 0, 1, 0]);
  });

  it("accepts CRLF line ends, comments, tabs and exponents", () => {
    const m = parseObj("v 0 0 0 # origin\r\nv\t1e0 0 0\r\nv 0 +1.5E-1 .0\r\nf 1/1/1 2/2 3 # t\r\n".replace("f 1/1/1", "vn 0 0 1\r\nf 1/1/1"));
    expect(Array.from(m.positions)).toEqual([0, 0, 0, 1, 0, 0, 0, Math.fround(0.15), 0]);
    expect(m.normals!.length).toBe(9);
  });

  it("names the line of each kind of malformed input", () => {
    expect(errorOf("v 0 0 0\nv 1 0 0\nv 0 1 0\n\nf 1 2 40\n").message).toBe("line 5: face index 40 out of range (valid: 1..3 or -3..-1)");
    expect(errorOf("v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 0\n").message).toBe("line 4: face index 0 out of range (valid: 1..3 or -3..-1)");
    expect(errorOf("v 0 0 0\nv 1 0 0\nv 0 1 0\nf -4 1 2\n").line).toBe(4);
    expect(errorOf("f 1 2 3\n").message).toBe("line 1: face index 1 out of range (no vertices defined yet)");
    expect(errorOf("v 0 0\n").message).toBe("line 1: vertex needs 3 coordinates, got 2");
    expect(errorOf("# a\nv 0 zero 0\n").message).toBe('line 2: y "zero" is not a number');
    expect(errorOf("v 0 0 0\nv 1 0 0\nf 1 2\n").message).toBe("line 3: face needs at least 3 vertices, got 2");
    expect(errorOf("v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1//2 2 3\n").message).toBe("line 4: normal index 2 out of range (no normals defined yet)");
    expect(errorOf("v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1/2/3/4 2 3\n").message).toMatch(/^line 4: face corner "1\/2\/3\/4" is malformed/);
    expect(errorOf("v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1.5 2 3\n").message).toBe('line 4: face index "1.5" is not an integer');
    expect(errorOf("v 0 0 0\n# nothing else\n").message).toBe("line 3: the file has no faces");
    expect(errorOf("v 1e999 0 0\n").message).toBe("line 1: x 1e999 is not finite");
  });

  it("stops at the triangle limit with the line that crossed it", () => {
    const text = "v 0 0 0\nv 1 0 0\nv 0 1 0\nv 1 1 0\nf 1 2 3\nf 1 2 3 4\n";
    expect(parseObj(text, { maxTriangles: 3 }).indices.length).toBe(9);
    expect(errorOf(text, { maxTriangles: 2 }).message).toBe("line 6: more than 2 triangles");
  });

  it("grows past its initial buffers", () => {
    const n = 5000;
    const parts: string[] = [];
    for (let i = 0; i < n; i++) parts.push(`v ${i} 0 0`, `v ${i} 1 0`, `v ${i} 0 1`, "f -3 -2 -1");
    const m = parseObj(parts.join("\n"));
    expect(m.indices.length).toBe(n * 3);
    expect(m.indices[m.indices.length - 1]).toBe(n * 3 - 1);
    expect(m.positions[(n * 3 - 1) * 3]).toBe(n - 1);
  });
});

/**
 * BVH comparison: our builder and batch closest-hit query against three-mesh-bvh (a general-purpose
 * raycasting BVH for three.js) on the same mesh and the same rays, single-threaded, in one process.
 * Times are CPU milliseconds of this process (see cpuMs).
 */
import { BufferAttribute, BufferGeometry, DoubleSide, Ray, Vector3 } from "three";
import { CENTER, MeshBVH, SAH } from "three-mesh-bvh";
import { buildTriangleBvh, intersectRays, triangleBvhByteLength } from "../../tracer/bvh/batch";
import { bounceRays, sphereRays, type BenchMesh } from "./meshes";

export type RaySetFigures = {
  name: string;
  rays: number;
  hits: number;
  oursMraysPerSec: number;
  threeSahMraysPerSec: number;
  threeCenterMraysPerSec: number;
  /** best of ours ÷ best of three-mesh-bvh's */
  ratioToThreeSah: number;
  ratioToThreeCenter: number;
  /** median over the interleaved rounds of (ours ÷ three-mesh-bvh's) within the round */
  medianRatioToThreeSah: number;
  medianRatioToThreeCenter: number;
  /** rays whose closest-hit distance differs between the libraries (relative 1e-4) */
  disagreements: number;
};

export type MeshFigures = {
  mesh: string;
  triangles: number;
  buildMs: { ours: number; threeSah: number; threeCenter: number };
  buildRatio: { threeSahOverOurs: number; oursOverThreeCenter: number };
  bytesPerTriangle: { ours: number; oursWithMesh: number };
  nodes: number;
  raySets: RaySetFigures[];
};

/**
 * Milliseconds of CPU time this process spent in `fn` (user + system). On a shared machine wall
 * time mostly measures how long the scheduler kept us waiting; CPU time measures the work. Both
 * libraries are measured the same way, in the same process, interleaved.
 */
export function cpuMs(fn: () => void): number {
  const c0 = process.cpuUsage();
  fn();
  const c = process.cpuUsage(c0);
  return (c.user + c.system) / 1000;
}

/** Closest hits with three-mesh-bvh's raycastFirst (double-sided, same tmin/tmax), written like ours. */
function threeIntersect(bvh: MeshBVH, rays: Float32Array, out: Float32Array): number {
  const ray = new Ray(new Vector3(), new Vector3());
  const n = rays.length / 8;
  let hits = 0;
  for (let i = 0; i < n; i++) {
    const r = i * 8;
    ray.origin.set(rays[r]!, rays[r + 1]!, rays[r + 2]!);
    ray.direction.set(rays[r + 3]!, rays[r + 4]!, rays[r + 5]!);
    const hit = bvh.raycastFirst(ray, DoubleSide, rays[r + 6]!, rays[r + 7]!);
    if (hit) {
      out[i * 4] = hit.distance;
      out[i * 4 + 3] = hit.faceIndex ?? -1;
      hits++;
    } else {
      out[i * 4] = Infinity;
      out[i * 4 + 3] = -1;
    }
  }
  return hits;
}

function median(values: number[]): number {
  const sorted = [...values].sort((x, y) => x - y), mid = sorted.length >> 1;
  return sorted.length % 2 === 1 ? sorted[mid]! : (sorted[mid - 1]! + sorted[mid]!) / 2;
}

/** Mrays per CPU second; repeats until at least minMs of CPU time so short sets are not timer noise. */
function timeRays(fn: () => void, rays: number, minMs: number): number {
  let reps = 0, ms = 0;
  do { ms += cpuMs(fn); reps++; } while (ms < minMs);
  return (rays * reps) / (ms / 1000) / 1e6;
}

export function compareMesh(mesh: BenchMesh, opts: { rays: number; buildRuns: number; warmRuns: number; minMs: number; rounds: number; log: (s: string) => void }): MeshFigures {
  const { positions, indices } = mesh;
  const triangles = indices.length / 3;
  // MeshBVH reorders its geometry's index buffer in place, so each three-mesh-bvh tree gets its own
  // copy of the mesh (a shared one would be scrambled by the next build).
  const geometryFor = (): BufferGeometry => {
    const g = new BufferGeometry();
    g.setAttribute("position", new BufferAttribute(positions.slice(), 3));
    g.setIndex(new BufferAttribute(indices.slice(), 1));
    return g;
  };

  // Warm both builders on this mesh so the timed runs compare optimised code with optimised code.
  let ours = buildTriangleBvh(positions, indices);
  for (let w = 1; w < opts.warmRuns; w++) {
    buildTriangleBvh(positions, indices);
    new MeshBVH(geometryFor(), { strategy: SAH });
    new MeshBVH(geometryFor(), { strategy: CENTER });
  }
  let sahGeometry = geometryFor(), centerGeometry = geometryFor();
  let threeSah = new MeshBVH(sahGeometry, { strategy: SAH });
  let threeCenter = new MeshBVH(centerGeometry, { strategy: CENTER });
  // Interleaved rounds, best of each: a burst of background compilation or GC then hits all three alike.
  // Every timed build starts from a fresh copy of the original mesh, as ours does: rebuilding over
  // a geometry whose index buffer an earlier build already sorted into tree order measured
  // 1.3× faster for the CENTER build (better cache locality), which is not the same input.
  let buildOurs = Infinity, buildSah = Infinity, buildCenter = Infinity;
  for (let r = 0; r < opts.buildRuns; r++) {
    buildOurs = Math.min(buildOurs, cpuMs(() => { ours = buildTriangleBvh(positions, indices); }));
    sahGeometry.dispose(); sahGeometry = geometryFor();
    buildSah = Math.min(buildSah, cpuMs(() => { threeSah = new MeshBVH(sahGeometry, { strategy: SAH }); }));
    centerGeometry.dispose(); centerGeometry = geometryFor();
    buildCenter = Math.min(buildCenter, cpuMs(() => { threeCenter = new MeshBVH(centerGeometry, { strategy: CENTER }); }));
  }

  const primary = sphereRays(positions, opts.rays, 1);
  const primaryOut = new Float32Array(opts.rays * 4);
  intersectRays(ours, primary, primaryOut);
  const bounce = bounceRays(mesh, primary, primaryOut, 2);
  const sets: [string, Float32Array][] = [["sphere", primary], ["bounce", bounce]];

  const raySets: RaySetFigures[] = [];
  for (const [name, rays] of sets) {
    const n = rays.length / 8;
    const a = new Float32Array(n * 4), b = new Float32Array(n * 4);
    const hits = intersectRays(ours, rays, a);
    threeIntersect(threeSah, rays, b);
    let disagreements = 0;
    for (let i = 0; i < n; i++) {
      const ta = a[i * 4]!, tb = b[i * 4]!;
      if (ta === Infinity || tb === Infinity ? ta !== tb : Math.abs(ta - tb) > 1e-4 * Math.max(1, tb)) disagreements++;
    }
    // Interleaved rounds: the machine is shared, so load drifts during a run. Best of each, and the
    // median of the ratios within a round (one lucky round of either library cannot set it).
    let oursM = 0, sahM = 0, centerM = 0;
    const sahRatios: number[] = [], centerRatios: number[] = [];
    for (let round = 0; round < opts.rounds; round++) {
      const o = timeRays(() => intersectRays(ours, rays, a), n, opts.minMs);
      const sah = timeRays(() => threeIntersect(threeSah, rays, b), n, opts.minMs);
      const center = timeRays(() => threeIntersect(threeCenter, rays, b), n, opts.minMs);
      oursM = Math.max(oursM, o); sahM = Math.max(sahM, sah); centerM = Math.max(centerM, center);
      sahRatios.push(o / sah); centerRatios.push(o / center);
    }
    const fig: RaySetFigures = {
      name, rays: n, hits,
      oursMraysPerSec: oursM, threeSahMraysPerSec: sahM, threeCenterMraysPerSec: centerM,
      ratioToThreeSah: oursM / sahM, ratioToThreeCenter: oursM / centerM,
      medianRatioToThreeSah: median(sahRatios), medianRatioToThreeCenter: median(centerRatios),
      disagreements,
    };
    raySets.push(fig);
    opts.log(`  ${mesh.name.padEnd(12)} ${name.padEnd(7)} ${String(n).padStart(7)} rays  ours ${oursM.toFixed(2).padStart(6)} Mrays/s  three-mesh-bvh SAH ${sahM.toFixed(2).padStart(6)} (×${fig.ratioToThreeSah.toFixed(1)}, median ×${fig.medianRatioToThreeSah.toFixed(1)})  CENTER ${centerM.toFixed(2).padStart(6)} (×${fig.ratioToThreeCenter.toFixed(1)}, median ×${fig.medianRatioToThreeCenter.toFixed(1)})  disagreements ${disagreements}`);
  }
  const oursBytes = triangleBvhByteLength(ours);
  const fig: MeshFigures = {
    mesh: mesh.name,
    triangles,
    buildMs: { ours: buildOurs, threeSah: buildSah, threeCenter: buildCenter },
    buildRatio: { threeSahOverOurs: buildSah / buildOurs, oursOverThreeCenter: buildOurs / buildCenter },
    bytesPerTriangle: { ours: oursBytes / triangles, oursWithMesh: (oursBytes + positions.byteLength + indices.byteLength) / triangles },
    nodes: ours.bvh.nodeCount,
    raySets,
  };
  opts.log(`  ${mesh.name.padEnd(12)} build   ${String(triangles).padStart(7)} tris  ours ${buildOurs.toFixed(0).padStart(5)} ms  three-mesh-bvh SAH ${buildSah.toFixed(0).padStart(5)} ms (${fig.buildRatio.threeSahOverOurs.toFixed(2)}× ours)  CENTER ${buildCenter.toFixed(0).padStart(5)} ms (ours ${fig.buildRatio.oursOverThreeCenter.toFixed(2)}× it)  ${fig.bytesPerTriangle.ours.toFixed(1)} B/tri (+mesh ${fig.bytesPerTriangle.oursWithMesh.toFixed(1)})`);
  for (const g of [sahGeometry, centerGeometry]) g.dispose();
  return fig;
}

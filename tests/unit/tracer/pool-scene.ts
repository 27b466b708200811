/** A small but non-trivial test scene for the pool, determinism and session tests (Harrow Lane desk corner). */
import { compiled } from "./render-helpers";
import type { CompiledScene } from "../../../tracer/compile/types";

export function deskCorner(spp = 8, width = 37, height = 23): CompiledScene {
  return compiled({
    image: { width, height },
    camera: { position: [0, 0.6, 2.2], target: [0, 0.3, 0], fovY: 40 },
    render: { spp, seed: 7, integrator: "path", maxDepth: 5 },
    materials: {
      desk: { type: "diffuse", albedo: [0.6, 0.5, 0.4] },
      glaze: { type: "metal", reflectance: [0.9, 0.85, 0.8], roughness: 0.3 },
      glass: { type: "glass", ior: 1.5 },
    },
    objects: [
      { id: "desk", shape: { type: "rect", center: [0, 0, 0], u: [3, 0, 0], v: [0, 0, -3] }, material: "desk" },
      { id: "kettle-body", shape: { type: "sphere", center: [-0.35, 0.3, 0], radius: 0.3 }, material: "glaze" },
      { id: "carafe", shape: { type: "sphere", center: [0.4, 0.25, 0.2], radius: 0.25 }, material: "glass" },
    ],
    lights: [{ id: "lamp", type: "area", shape: { type: "disk", center: [0, 1.8, 0.5], normal: [0, -1, 0], radius: 0.5 }, radiance: [6, 6, 5] }],
  });
}

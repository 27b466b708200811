// A small scene of our own: the Wren kettle stand-in (a sphere) on a bench, a key and a fill light in two groups.
export const kettleScene = {
  format: "tracewell.scene/1",
  name: "Wren kettle, bench test",
  image: { width: 32, height: 24 },
  camera: { position: [0, 1, 4], target: [0, 0.5, 0], fovY: 40 },
  render: { spp: 16 },
  display: { exposure: 0, toneMap: "none" },
  materials: {
    glaze: { type: "diffuse", albedo: [0.8, 0.75, 0.7] },
    bench: { type: "diffuse", albedo: [0.5, 0.5, 0.5] },
  },
  objects: [
    { id: "kettle", shape: { type: "sphere", center: [0, 0.5, 0], radius: 0.5 }, material: "glaze" },
    { id: "bench", shape: { type: "box", min: [-2, -0.1, -2], max: [2, 0, 2] }, material: "bench" },
  ],
  lights: [
    { id: "key", type: "area", shape: { type: "rect", center: [1, 2, 1], u: [0.5, 0, 0], v: [0, 0, 0.5] }, power: 40, group: "key" },
    { id: "fill", type: "area", shape: { type: "disk", center: [-1.5, 1.5, 1], normal: [1, -1, -0.5], radius: 0.3 }, radiance: [2, 2, 2.4], group: "fill" },
    { id: "bulb", type: "point", position: [0, 3, -1], intensity: [1, 0.9, 0.8] },
  ],
  environment: { type: "sky", zenith: [0.1, 0.15, 0.3], horizon: [0.3, 0.3, 0.3], ground: [0.05, 0.05, 0.05] },
};

export const kettleText = JSON.stringify(kettleScene, null, 2) + "\n";

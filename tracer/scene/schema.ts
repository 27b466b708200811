/**
 * Scene format 1: the single source of truth for the JSON that the editor edits, the database stores,
 * the API serves and the tracer renders. The prose contract lives in shared/design/scene-format.md;
 * names, defaults and meanings here follow it exactly. Every object is strict so a typo is an error,
 * not a silently ignored key. Descriptions are exported into scene.schema.json for editor hover help.
 */
import { z } from "zod";
import { LIMITS } from "./limits";

export const SCENE_FORMAT = "tracewell.scene/1" as const;

const finite = () => z.number();

export const IdSchema = z
  .string()
  .min(1)
  .max(64)
  .regex(/^[A-Za-z0-9_-]+$/, { message: "must be 1–64 characters from A–Z, a–z, 0–9, _ and -" })
  .describe("Identifier: 1–64 characters from A–Z, a–z, 0–9, _ and -; unique within its collection.");

export const Vec3Schema = z
  .tuple([finite(), finite(), finite()])
  .describe("A vector [x, y, z] of finite numbers (metres for positions; +Y is up).");

export const RgbSchema = z
  .tuple([z.number().min(0), z.number().min(0), z.number().min(0)])
  .describe("Linear RGB (sRGB / Rec. 709 primaries), each channel ≥ 0.");

/** Reflectances are physically bounded: a surface cannot return more light than arrives. */
export const ReflectanceSchema = z
  .tuple([z.number().min(0).max(1), z.number().min(0).max(1), z.number().min(0).max(1)])
  .describe("Linear RGB reflectance, each channel in [0, 1].");

const SHA256_REF = /^sha256:[0-9a-f]{64}$/;

/**
 * Relative paths stay inside the scene's folder: no absolute paths, no "..", no URL schemes,
 * no backslashes, so a shared scene can never make a render machine read an arbitrary file.
 */
export function assetRefProblem(ref: string): string | null {
  if (ref.startsWith("sha256:")) {
    return SHA256_REF.test(ref) ? null : 'must be "sha256:" followed by 64 lowercase hex digits';
  }
  if (ref.length === 0) return "must not be empty";
  if (ref.length > 512) return "must be at most 512 characters";
  if (ref.includes("\\")) return "must use / as the folder separator";
  if (ref.startsWith("/")) return "must be a relative path (no leading /)";
  if (/^[A-Za-z][A-Za-z0-9+.-]*:/.test(ref)) return 'must be "sha256:<64 hex>" or a relative path';
  if (/[\u0000-\u001f]/.test(ref)) return "must not contain control characters";
  const segments = ref.split("/");
  for (const s of segments) {
    if (s === "" || s === "." || s === "..") return 'must be a relative path without empty, "." or ".." segments';
  }
  return null;
}

export const AssetRefSchema = z
  .string()
  .superRefine((ref, ctx) => {
    const problem = assetRefProblem(ref);
    if (problem) ctx.addIssue({ code: "custom", message: problem });
  })
  .describe('An asset: "sha256:<64 hex>" (an uploaded asset, by content hash) or a path relative to the scene file\'s folder, e.g. "meshes/kettle.obj".');

// ---------------------------------------------------------------------------------------------
// camera, render, display

export const CameraSchema = z
  .strictObject({
    position: Vec3Schema.describe("Eye point, metres."),
    target: Vec3Schema.describe("The point looked at."),
    up: Vec3Schema.default([0, 1, 0]).describe("Up hint; need not be perpendicular to the view direction. Default [0, 1, 0]."),
    fovY: z.number().min(1).max(179).describe("Full vertical field of view in degrees, 1–179."),
    aperture: z.number().min(0).default(0).describe("Thin-lens radius in metres; 0 is a pinhole. Default 0."),
    focusDistance: z
      .number()
      .gt(0)
      .optional()
      .describe("Distance from the lens to the plane in focus, metres. Default: distance from position to target."),
    shutter: z
      .tuple([finite(), finite()])
      .default([0, 0])
      .describe("[open, close] shutter times; objects with motion move over this interval. Default [0, 0]."),
  })
  .superRefine((c, ctx) => {
    const d = [c.target[0] - c.position[0], c.target[1] - c.position[1], c.target[2] - c.position[2]];
    const len = Math.hypot(d[0], d[1], d[2]);
    if (len === 0) {
      ctx.addIssue({ code: "custom", path: ["target"], message: "must differ from camera.position" });
      return;
    }
    const up = c.up;
    const cx = d[1] * up[2] - d[2] * up[1];
    const cy = d[2] * up[0] - d[0] * up[2];
    const cz = d[0] * up[1] - d[1] * up[0];
    const upLen = Math.hypot(up[0], up[1], up[2]);
    if (upLen === 0 || Math.hypot(cx, cy, cz) <= 1e-9 * len * upLen) {
      ctx.addIssue({ code: "custom", path: ["up"], message: "must not be zero or parallel to the view direction (target − position)" });
    }
    if (c.shutter[1] < c.shutter[0]) {
      ctx.addIssue({ code: "custom", path: ["shutter"], message: "close time must not be earlier than open time" });
    }
  })
  .describe("The camera: a pinhole or thin lens looking from position at target.");

export const INTEGRATORS = ["path", "whitted", "direct"] as const;
export type Integrator = (typeof INTEGRATORS)[number];

export const RenderSettingsSchema = z
  .strictObject({
    integrator: z
      .enum(INTEGRATORS)
      .default("path")
      .describe(
        '"path": path tracing with next-event estimation and multiple importance sampling; "whitted": mirror/refraction rays plus shadow rays, no diffuse interreflection; "direct": direct lighting only. Default "path".',
      ),
    spp: z.number().int().min(1).max(LIMITS.maxSpp).describe(`Samples per pixel, 1–${LIMITS.maxSpp}.`),
    seed: z
      .number()
      .int()
      .min(0)
      .max(0xffffffff)
      .default(1)
      .describe("Unsigned 32-bit seed; with the scene it fixes every random number. Default 1."),
    maxDepth: z
      .number()
      .int()
      .min(1)
      .max(LIMITS.maxDepth)
      .default(8)
      .describe(`Most scattering events on a path, 1–${LIMITS.maxDepth}. Default 8.`),
    clamp: z
      .number()
      .min(0)
      .default(0)
      .describe("If > 0, each sample's radiance is clamped to this value (firefly control; biased). Default 0 (off)."),
  })
  .describe("How the image is computed.");

export const TONE_MAPS = ["none", "reinhard", "filmic"] as const;
export type ToneMap = (typeof TONE_MAPS)[number];

export const DisplaySchema = z
  .strictObject({
    exposure: z.number().min(-64).max(64).default(0).describe("Exposure in stops: pixel value × 2^exposure. Default 0."),
    toneMap: z
      .enum(TONE_MAPS)
      .default("none")
      .describe('"none" (clip), "reinhard" (Reinhard et al. 2002 global operator on luminance) or "filmic" (a published filmic curve fit). Default "none".'),
  })
  .describe("How linear radiance becomes an 8-bit picture (PNG and screen); never changes the HDR outputs.");

export const ImageSchema = z
  .strictObject({
    width: z.number().int().min(1).max(LIMITS.maxImageSide).describe(`Image width in pixels, 1–${LIMITS.maxImageSide}.`),
    height: z.number().int().min(1).max(LIMITS.maxImageSide).describe(`Image height in pixels, 1–${LIMITS.maxImageSide}.`),
  })
  .superRefine((im, ctx) => {
    if (im.width * im.height > LIMITS.maxImagePixels) {
      ctx.addIssue({
        code: "custom",
        message: `width × height must be at most ${LIMITS.maxImagePixels} pixels (got ${im.width * im.height})`,
      });
    }
  })
  .describe("Output image size.");

// ---------------------------------------------------------------------------------------------
// environment

export const UniformEnvironmentSchema = z
  .strictObject({
    type: z.literal("uniform"),
    radiance: RgbSchema.describe("Radiance arriving equally from every direction."),
  })
  .describe("The same radiance from every direction.");

export const SkyEnvironmentSchema = z
  .strictObject({
    type: z.literal("sky"),
    zenith: RgbSchema.describe("Radiance straight up (direction y = 1)."),
    horizon: RgbSchema.describe("Radiance at the horizon (direction y = 0); blends linearly in y to the zenith."),
    ground: RgbSchema.describe("Radiance of every direction below the horizon (y < 0)."),
  })
  .describe("A simple sky gradient: horizon to zenith linearly in y, constant ground below.");

export const MapEnvironmentSchema = z
  .strictObject({
    type: z.literal("map"),
    asset: AssetRefSchema.describe('An equirectangular Radiance .hdr image: "sha256:<64 hex>" or a path relative to the scene file.'),
    scale: z.number().min(0).default(1).describe("Multiplier on the map's radiance. Default 1."),
    rotationY: finite().default(0).describe("Rotation of the map about +Y, degrees. Default 0."),
  })
  .describe("An equirectangular Radiance .hdr environment map, importance-sampled by luminance.");

export const EnvironmentSchema = z
  .discriminatedUnion("type", [UniformEnvironmentSchema, SkyEnvironmentSchema, MapEnvironmentSchema])
  .describe("Light arriving from infinitely far away (light group \"environment\"). Absent = black.");

// ---------------------------------------------------------------------------------------------
// materials

export const DiffuseMaterialSchema = z
  .strictObject({
    type: z.literal("diffuse"),
    albedo: ReflectanceSchema.describe("Lambertian reflectance per channel, [0, 1]."),
  })
  .describe("Lambertian diffuse.");

export const MetalMaterialSchema = z
  .strictObject({
    type: z.literal("metal"),
    reflectance: ReflectanceSchema.describe("Normal-incidence reflectance (Schlick-style tint), [0, 1] per channel."),
    roughness: z
      .number()
      .min(0)
      .max(1)
      .default(0)
      .describe("0 is a perfect mirror; > 0 a GGX microfacet lobe with alpha = roughness². Default 0."),
  })
  .describe("A conductor: perfect mirror or GGX microfacet reflection.");

export const GlassMaterialSchema = z
  .strictObject({
    type: z.literal("glass"),
    ior: z.number().min(1).max(4).default(1.5).describe("Index of refraction of the inside relative to the outside, 1–4. Default 1.5."),
    roughness: z
      .number()
      .min(0)
      .max(1)
      .default(0)
      .describe("0 is smooth; > 0 uses GGX (alpha = roughness²) for reflection and transmission. Default 0."),
    absorption: RgbSchema.default([0, 0, 0]).describe("Beer–Lambert absorption coefficient per metre inside the medium. Default [0, 0, 0]."),
  })
  .describe("A dielectric with exact unpolarised Fresnel reflection and Snell refraction.");

export const MaterialSchema = z
  .discriminatedUnion("type", [DiffuseMaterialSchema, MetalMaterialSchema, GlassMaterialSchema])
  .describe("A surface material: diffuse, metal or glass.");

export const MATERIAL_TYPES = ["diffuse", "metal", "glass"] as const;
export type MaterialType = (typeof MATERIAL_TYPES)[number];

// ---------------------------------------------------------------------------------------------
// shapes

export const SphereShapeSchema = z
  .strictObject({
    type: z.literal("sphere"),
    center: Vec3Schema.describe("Centre, metres."),
    radius: z.number().gt(0).describe("Radius, metres (> 0)."),
  })
  .describe("A sphere.");

export const RectShapeSchema = z
  .strictObject({
    type: z.literal("rect"),
    center: Vec3Schema.describe("Centre, metres."),
    u: Vec3Schema.describe("First edge vector: corners are center ± u/2 ± v/2."),
    v: Vec3Schema.describe("Second edge vector; the front face's normal is normalize(u × v)."),
  })
  .superRefine((r, ctx) => {
    const [ux, uy, uz] = r.u;
    const [vx, vy, vz] = r.v;
    const area = Math.hypot(uy * vz - uz * vy, uz * vx - ux * vz, ux * vy - uy * vx);
    if (!(area > 0)) ctx.addIssue({ code: "custom", path: ["v"], message: "u and v must be non-zero and not parallel (the rectangle has no area)" });
  })
  .describe("A parallelogram with corners center ± u/2 ± v/2; front face normal normalize(u × v).");

export const DiskShapeSchema = z
  .strictObject({
    type: z.literal("disk"),
    center: Vec3Schema.describe("Centre, metres."),
    normal: Vec3Schema.describe("Front-face normal (need not be unit length, must be non-zero)."),
    radius: z.number().gt(0).describe("Radius, metres (> 0)."),
  })
  .superRefine((d, ctx) => {
    if (!(Math.hypot(d.normal[0], d.normal[1], d.normal[2]) > 0)) ctx.addIssue({ code: "custom", path: ["normal"], message: "must be non-zero" });
  })
  .describe("A flat disk.");

export const BoxShapeSchema = z
  .strictObject({
    type: z.literal("box"),
    min: Vec3Schema.describe("Lowest corner [x, y, z]."),
    max: Vec3Schema.describe("Highest corner [x, y, z]; each component greater than min's."),
  })
  .superRefine((b, ctx) => {
    const axes = ["x", "y", "z"];
    for (let i = 0; i < 3; i++) {
      if (!(b.max[i]! > b.min[i]!)) {
        ctx.addIssue({ code: "custom", path: ["max", i], message: `must be greater than min ${axes[i]} (${b.min[i]})` });
      }
    }
  })
  .describe("A closed axis-aligned box.");

export const MeshShapeSchema = z
  .strictObject({
    type: z.literal("mesh"),
    asset: AssetRefSchema.describe('A Wavefront OBJ file (v, vn, f): "sha256:<64 hex>" or a path relative to the scene file.'),
    translate: Vec3Schema.default([0, 0, 0]).describe("Translation, metres, applied last. Default [0, 0, 0]."),
    rotate: Vec3Schema.default([0, 0, 0]).describe("XYZ Euler rotation in degrees, applied after scale. Default [0, 0, 0]."),
    scale: z
      .union([z.number().gt(0), z.tuple([z.number().gt(0), z.number().gt(0), z.number().gt(0)])])
      .default(1)
      .describe("Uniform scale (number) or per-axis [x, y, z], each > 0, applied first. Default 1."),
  })
  .describe("Triangles from a Wavefront OBJ file; polygons are fan-triangulated. Applied scale → rotate → translate.");

export const ShapeSchema = z
  .discriminatedUnion("type", [SphereShapeSchema, RectShapeSchema, DiskShapeSchema, BoxShapeSchema, MeshShapeSchema])
  .describe("The object's geometry: sphere, rect, disk, box or mesh.");

export const SHAPE_TYPES = ["sphere", "rect", "disk", "box", "mesh"] as const;
export type ShapeType = (typeof SHAPE_TYPES)[number];

export const LightShapeSchema = z
  .discriminatedUnion("type", [RectShapeSchema, DiskShapeSchema, SphereShapeSchema])
  .describe("The emitting shape: rect or disk (front face only) or sphere (outward).");

// ---------------------------------------------------------------------------------------------
// objects and lights

export const MotionSchema = z
  .strictObject({
    velocity: Vec3Schema.describe("Translation per unit of shutter time, metres."),
  })
  .describe("The object is translated by velocity × t at shutter time t.");

export const SceneObjectSchema = z
  .strictObject({
    id: IdSchema,
    shape: ShapeSchema,
    material: IdSchema.describe("The id of an entry in materials."),
    motion: MotionSchema.optional(),
  })
  .describe("A visible object: a shape with a material.");

const GroupSchema = IdSchema.default("default").describe(
  'Light group name (default "default"). The tracer can write one radiance buffer per group; the beauty image is their sum. "environment" is reserved for the environment.',
);

export const AreaLightSchema = z
  .strictObject({
    id: IdSchema,
    type: z.literal("area"),
    shape: LightShapeSchema,
    radiance: RgbSchema.optional().describe("Emitted radiance (W·sr⁻¹·m⁻² per channel). Give this or power, not both."),
    power: z
      .union([z.number().min(0), RgbSchema])
      .optional()
      .describe("Emitted power in watts (number, or per channel); radiance = power / (π · area). Give this or radiance, not both."),
    visible: z.boolean().default(true).describe("Whether the camera and reflections see the light itself. Default true."),
    group: GroupSchema,
  })
  .superRefine((l, ctx) => {
    if (l.radiance === undefined && l.power === undefined) {
      ctx.addIssue({ code: "custom", path: ["radiance"], message: "an area light needs radiance or power" });
    } else if (l.radiance !== undefined && l.power !== undefined) {
      ctx.addIssue({ code: "custom", path: ["power"], message: "give radiance or power, not both" });
    }
  })
  .describe("An area light: rect, disk or sphere emitter.");

export const PointLightSchema = z
  .strictObject({
    id: IdSchema,
    type: z.literal("point"),
    position: Vec3Schema.describe("Position, metres."),
    intensity: RgbSchema.describe("Radiant intensity, W/sr per channel (hard shadows)."),
    group: GroupSchema,
  })
  .describe("A point light.");

export const LightSchema = z.discriminatedUnion("type", [AreaLightSchema, PointLightSchema]).describe("A light: area or point.");

export const LIGHT_TYPES = ["area", "point"] as const;

// ---------------------------------------------------------------------------------------------
// the scene

export const SceneSchema = z
  .strictObject({
    format: z.literal(SCENE_FORMAT).describe(`Format version; must be "${SCENE_FORMAT}".`),
    name: z.string().min(1).max(LIMITS.maxNameLength).describe("A short human-readable title."),
    notes: z.string().max(LIMITS.maxNotesLength).optional().describe("Optional free text."),
    image: ImageSchema,
    camera: CameraSchema,
    render: RenderSettingsSchema,
    display: DisplaySchema.default({ exposure: 0, toneMap: "none" }),
    environment: EnvironmentSchema.optional(),
    materials: z
      .record(IdSchema, MaterialSchema)
      .superRefine((m, ctx) => {
        const n = Object.keys(m).length;
        if (n > LIMITS.maxMaterials) ctx.addIssue({ code: "custom", message: `must have at most ${LIMITS.maxMaterials} entries (got ${n})` });
      })
      .describe("Materials by id."),
    objects: z.array(SceneObjectSchema).max(LIMITS.maxObjects).describe("The visible objects."),
    lights: z.array(LightSchema).max(LIMITS.maxLights).default([]).describe("Lights (optional; the environment also lights the scene)."),
  })
  .describe("A Tracewell scene, format 1.");

export type SceneInput = z.input<typeof SceneSchema>;
export type Scene = z.output<typeof SceneSchema>;
export type Vec3 = z.output<typeof Vec3Schema>;
export type Rgb = z.output<typeof RgbSchema>;
export type Camera = Scene["camera"];
export type RenderSettings = Scene["render"];
export type DisplaySettings = Scene["display"];
export type ImageSize = Scene["image"];
export type Environment = NonNullable<Scene["environment"]>;
export type Material = z.output<typeof MaterialSchema>;
export type DiffuseMaterial = z.output<typeof DiffuseMaterialSchema>;
export type MetalMaterial = z.output<typeof MetalMaterialSchema>;
export type GlassMaterial = z.output<typeof GlassMaterialSchema>;
export type Shape = z.output<typeof ShapeSchema>;
export type SphereShape = z.output<typeof SphereShapeSchema>;
export type RectShape = z.output<typeof RectShapeSchema>;
export type DiskShape = z.output<typeof DiskShapeSchema>;
export type BoxShape = z.output<typeof BoxShapeSchema>;
export type MeshShape = z.output<typeof MeshShapeSchema>;
export type LightShape = z.output<typeof LightShapeSchema>;
export type SceneObject = z.output<typeof SceneObjectSchema>;
export type Light = z.output<typeof LightSchema>;
export type AreaLight = z.output<typeof AreaLightSchema>;
export type PointLight = z.output<typeof PointLightSchema>;
export type EnvironmentType = Environment["type"];
export type LightType = Light["type"];

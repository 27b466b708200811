// The request and response shapes of API v1. Route handlers parse bodies and build responses with these,
// and the OpenAPI document is generated from the same objects, so the published description cannot drift
// from what the server accepts and returns.
import { z } from "zod";

/** Schemas that appear by name in the OpenAPI document (components.schemas). */
export const apiRegistry = z.registry<{ id: string; description?: string; example?: unknown }>();

function named<T extends z.ZodType>(schema: T, id: string, description: string, example?: unknown): T {
  apiRegistry.add(schema, example === undefined ? { id, description } : { id, description, example });
  return schema;
}

const timestamp = z.iso.datetime({ offset: true }).describe("RFC 3339 time stamp");
const uuid = z.uuid();

export const ApiErrorSchema = named(
  z.object({
    error: z.object({
      code: z.string().describe("Stable, machine-readable reason, e.g. `not_found`, `validation_failed`, `conflict`"),
      message: z.string().describe("Human-readable explanation"),
      path: z.string().optional().describe("The field or scene path the error is about, e.g. `scene.lights[2].shape.radius`"),
      issues: z
        .array(z.object({ path: z.string(), message: z.string(), line: z.number().int().optional(), column: z.number().int().optional() }))
        .optional()
        .describe("Every validation problem when there is more than one"),
      headVersionId: z.uuid().optional().describe("On 409 conflicts: the scene's current head version"),
    }),
  }),
  "Error",
  "The one error shape every API v1 failure uses.",
  { error: { code: "validation_failed", message: "scene.lights[0].shape.radius: must be > 0", path: "scene.lights[0].shape.radius" } },
);

export const ProjectSchema = named(
  z.object({
    id: uuid,
    name: z.string(),
    description: z.string(),
    role: z.enum(["owner", "editor", "viewer"]).describe("The caller's role in the project"),
    createdAt: timestamp,
  }),
  "Project",
  "A project the caller is a member of.",
);

export const SceneSummarySchema = named(
  z.object({
    id: uuid,
    projectId: uuid,
    name: z.string(),
    headVersionId: uuid.nullable().describe("The newest version; new versions must name it as their parent"),
    createdAt: timestamp,
    updatedAt: timestamp,
  }),
  "Scene",
  "A scene: a named, linear history of versions.",
);

export const VersionSummarySchema = named(
  z.object({
    id: uuid,
    sceneId: uuid,
    number: z.number().int().min(1),
    parentId: uuid.nullable(),
    kind: z.enum(["save", "restore", "fork", "import", "create"]),
    message: z.string(),
    authorId: uuid.nullable(),
    createdAt: timestamp,
  }),
  "VersionSummary",
  "One version of a scene, without its content.",
);

export const VersionSchema = named(
  VersionSummarySchema.extend({
    scene: z.record(z.string(), z.unknown()).describe("The scene document (scene format 1)"),
  }),
  "Version",
  "One immutable version of a scene, with the scene document. Served with a strong ETag.",
);

export const CreateVersionBodySchema = named(
  z.strictObject({
    parentVersionId: uuid.describe("The head version this edit starts from; if another save landed first the answer is 409"),
    scene: z.unknown().describe("The full scene document (scene format 1), as an object or as JSON text"),
    message: z.string().trim().min(1, "must not be empty").max(500, "must be at most 500 characters"),
  }),
  "CreateVersionBody",
  "A new version of a scene.",
  { parentVersionId: "5b0c2f7e-2a51-4a9e-8d0b-0c7c3f0e9a11", message: "Warmer key light on the Wren kettle", scene: { format: 1 } },
);

export const RenderStatusSchema = z.enum(["queued", "running", "done", "failed", "cancelled"]);

export const RenderLinksSchema = z.object({
  self: z.string(),
  png: z.string().optional().describe("Display-referred 8-bit sRGB image"),
  hdr: z.string().optional().describe("Radiance RGBE image of the mean radiance"),
  pfm: z.string().optional().describe("Portable float map of the mean radiance"),
  state: z.string().optional().describe("Serialized exact accumulation, for continuing elsewhere"),
  groups: z.record(z.string(), z.string()).optional().describe("Per light group PFM files"),
});

export const RenderChunkSchema = z.object({
  index: z.number().int().min(0),
  passStart: z.number().int().min(0),
  passEnd: z.number().int().min(1),
  status: z.enum(["pending", "running", "done", "failed", "cancelled"]),
  attempts: z.number().int().min(0),
  worker: z.string().nullable(),
});

export const RenderSchema = named(
  z.object({
    id: uuid,
    projectId: uuid,
    sceneId: uuid,
    versionId: uuid,
    source: z.enum(["browser", "pool"]),
    status: RenderStatusSchema,
    title: z.string(),
    spp: z.number().int().describe("Target samples per pixel"),
    sppDone: z.number().int().describe("Samples per pixel finished and stored"),
    progress: z.number().min(0).max(1).describe("sppDone / spp"),
    seed: z.number().int(),
    width: z.number().int(),
    height: z.number().int(),
    integrator: z.string(),
    tracerVersion: z.string(),
    accumulationHash: z.string().nullable().describe("Hash of the exact accumulation; equal hashes mean bit-identical renders"),
    continuedFromId: uuid.nullable(),
    renderMs: z.number().int().nullable(),
    samplesPerSecond: z.number().nullable(),
    error: z.string().nullable(),
    createdAt: timestamp,
    finishedAt: timestamp.nullable(),
    chunks: z.array(RenderChunkSchema).optional().describe("Pool renders: the sample-pass chunks and who rendered them"),
    links: RenderLinksSchema,
  }),
  "Render",
  "A render job and, when done, links to its files.",
);

const MAX_API_SPP = 65536;
const MAX_API_SIDE = 8192;

export const CreateRenderBodySchema = named(
  z
    .strictObject({
      versionId: uuid.optional().describe("The scene version to render (or give continueFrom)"),
      continueFrom: uuid
        .optional()
        .describe("A finished render with stored accumulation state (e.g. a browser preview); the pool renders only the missing passes"),
      spp: z
        .number()
        .int("must be a whole number")
        .min(1, "must be at least 1")
        .max(MAX_API_SPP, `must be at most ${MAX_API_SPP}`)
        .optional()
        .describe("Target samples per pixel; required with versionId, defaults to the continued render's target"),
      seed: z.number().int().min(0).max(4294967295).optional().describe("Overrides render.seed of the scene"),
      width: z.number().int().min(1).max(MAX_API_SIDE).optional().describe("Overrides image.width"),
      height: z.number().int().min(1).max(MAX_API_SIDE).optional().describe("Overrides image.height"),
      chunkPasses: z.number().int().min(1).max(MAX_API_SPP).optional().describe("Sample passes per pool chunk (default: about an eighth of the job)"),
      title: z.string().max(200).optional(),
    })
    .superRefine((b, ctx) => {
      if (!b.versionId && !b.continueFrom) ctx.addIssue({ code: "custom", path: ["versionId"], message: "give versionId or continueFrom" });
      if (b.versionId && b.continueFrom) ctx.addIssue({ code: "custom", path: ["continueFrom"], message: "give either versionId or continueFrom, not both" });
      if (b.versionId && b.spp === undefined) ctx.addIssue({ code: "custom", path: ["spp"], message: "is required with versionId" });
      if (b.continueFrom && (b.seed !== undefined || b.width !== undefined || b.height !== undefined)) {
        ctx.addIssue({ code: "custom", path: ["continueFrom"], message: "a continued render keeps the seed and size of the render it continues" });
      }
    }),
  "CreateRenderBody",
  "Start a pool render of a version, or continue a finished render to more samples.",
  { versionId: "5b0c2f7e-2a51-4a9e-8d0b-0c7c3f0e9a11", spp: 256, seed: 7, width: 640, height: 400 },
);

export function pageSchema<T extends z.ZodType>(item: T, id: string) {
  return named(
    z.object({
      items: z.array(item),
      nextCursor: z.string().nullable().describe("Pass as ?cursor= to get the next page; null on the last page"),
    }),
    id,
    "One page of a cursor-paginated list.",
  );
}

export const ProjectPageSchema = pageSchema(ProjectSchema, "ProjectPage");
export const ScenePageSchema = pageSchema(SceneSummarySchema, "ScenePage");
export const VersionPageSchema = pageSchema(VersionSummarySchema, "VersionPage");
export const RenderPageSchema = pageSchema(RenderSchema, "RenderPage");

export const PageQuerySchema = z.object({
  limit: z.coerce.number().int("must be a whole number").min(1, "must be at least 1").max(200, "must be at most 200").default(50),
  cursor: z.string().max(500).optional(),
});

export const RenderListQuerySchema = PageQuerySchema.extend({
  status: RenderStatusSchema.optional(),
  sceneId: uuid.optional(),
  versionId: uuid.optional(),
  source: z.enum(["browser", "pool"]).optional(),
});

export type ApiProject = z.infer<typeof ProjectSchema>;
export type ApiScene = z.infer<typeof SceneSummarySchema>;
export type ApiVersionSummary = z.infer<typeof VersionSummarySchema>;
export type ApiVersion = z.infer<typeof VersionSchema>;
export type ApiRender = z.infer<typeof RenderSchema>;
export type CreateRenderBody = z.infer<typeof CreateRenderBodySchema>;

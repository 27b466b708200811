// The OpenAPI 3.1 description of API v1, generated from the same zod schemas the handlers parse and answer
// with (zod 4's JSON Schema output is draft 2020-12, which is what OpenAPI 3.1 uses).
import { z } from "zod";
import { SceneSchema } from "@tracer/scene/schema";
import { TRACER_VERSION } from "@tracer/version";
import { PageQuerySchema, RenderListQuerySchema, apiRegistry } from "./api-schemas.server";

type Json = Record<string, unknown>;

const ref = (id: string) => ({ $ref: `#/components/schemas/${id}` });
const jsonContent = (schema: Json, example?: unknown) => ({
  "application/json": example === undefined ? { schema } : { schema, example },
});

function errorResponses(...codes: number[]): Record<string, Json> {
  const text: Record<number, string> = {
    400: "Malformed request: bad JSON, query parameter or cursor",
    401: "No valid API token (send `Authorization: Bearer <token>`)",
    403: "The token's scope or your role does not allow this",
    404: "Not found, or not visible to you",
    409: "Conflict (see `error.code`)",
    413: "Body too large",
    415: "The body must be JSON",
    422: "Validation failed; `error.path` and `error.issues` name the fields",
    429: "Rate limited; wait the number of seconds in Retry-After",
    503: "The render queue is unreachable",
  };
  const out: Record<string, Json> = {};
  for (const c of codes) out[String(c)] = { description: text[c] ?? "Error", content: jsonContent(ref("Error")) };
  return out;
}

const common = [401, 429];

function queryParameters(schema: z.ZodObject): Json[] {
  return Object.entries(schema.shape).map(([name, field]) => {
    const s = z.toJSONSchema(field as z.ZodType, { io: "input", unrepresentable: "any" }) as Json;
    delete s.$schema;
    return { name, in: "query", required: false, schema: s, ...(typeof s.description === "string" ? { description: s.description } : {}) };
  });
}

const idParam = (name: string, what: string) => ({ name, in: "path", required: true, description: `The ${what} id`, schema: { type: "string", format: "uuid" } });

const rateHeaders = {
  "RateLimit-Limit": { description: "Requests a token may burst", schema: { type: "integer" } },
  "RateLimit-Remaining": { description: "Requests left in the current burst", schema: { type: "integer" } },
};

function binary(contentType: string, description: string): Json {
  return {
    description,
    headers: { ETag: { description: "Strong validator; send as If-None-Match to get 304", schema: { type: "string" } } },
    content: { [contentType]: { schema: { type: "string", contentMediaType: contentType } } },
  };
}

let cached: Json | undefined;

export function openApiDocument(): Json {
  if (cached) return cached;
  const generated = z.toJSONSchema(apiRegistry, { uri: (id) => `#/components/schemas/${id}`, unrepresentable: "any" }) as { schemas: Record<string, Json> };
  const schemas: Record<string, Json> = {};
  for (const [id, s] of Object.entries(generated.schemas)) {
    const { $schema: _drop, id: _id, ...rest } = s;
    schemas[id] = rest;
  }
  try {
    const scene = z.toJSONSchema(SceneSchema, { io: "input", unrepresentable: "any" }) as Json;
    delete scene.$schema;
    schemas.SceneDocument = scene;
  } catch {
    schemas.SceneDocument = { type: "object", description: "A scene document (scene format 1)" };
  }

  const page = queryParameters(PageQuerySchema);
  cached = {
    openapi: "3.1.0",
    info: {
      title: "Tracewell API",
      version: "1.0.0",
      description:
        "Read projects, scenes and versions, submit new versions, and run renders on the server pool. " +
        "Authenticate with an API token from your account page: `Authorization: Bearer tw_…`. Tokens of scope " +
        "`read` can list and download; tokens of scope `render` can also save versions and queue renders. " +
        `Pool workers run ${TRACER_VERSION}.`,
    },
    servers: [{ url: "/" }],
    security: [{ bearer: [] }],
    tags: [
      { name: "projects" },
      { name: "scenes" },
      { name: "versions" },
      { name: "renders", description: "Pool renders are split into chunks of sample passes; the merge is exact, so results are bit-identical to one process." },
    ],
    paths: {
      "/api/v1/projects": {
        get: {
          tags: ["projects"],
          operationId: "listProjects",
          summary: "Projects you are a member of",
          parameters: page,
          responses: { "200": { description: "A page of projects", headers: rateHeaders, content: jsonContent(ref("ProjectPage")) }, ...errorResponses(400, ...common) },
        },
      },
      "/api/v1/projects/{projectId}": {
        get: {
          tags: ["projects"],
          operationId: "getProject",
          parameters: [idParam("projectId", "project")],
          responses: { "200": { description: "The project", content: jsonContent(ref("Project")) }, ...errorResponses(404, ...common) },
        },
      },
      "/api/v1/projects/{projectId}/scenes": {
        get: {
          tags: ["scenes"],
          operationId: "listScenes",
          parameters: [idParam("projectId", "project"), ...page],
          responses: { "200": { description: "A page of scenes", content: jsonContent(ref("ScenePage")) }, ...errorResponses(400, 404, ...common) },
        },
      },
      "/api/v1/projects/{projectId}/renders": {
        get: {
          tags: ["renders"],
          operationId: "listRenders",
          parameters: [idParam("projectId", "project"), ...queryParameters(RenderListQuerySchema)],
          responses: { "200": { description: "A page of renders, newest first", content: jsonContent(ref("RenderPage")) }, ...errorResponses(400, 404, ...common) },
        },
      },
      "/api/v1/scenes/{sceneId}": {
        get: {
          tags: ["scenes"],
          operationId: "getScene",
          parameters: [idParam("sceneId", "scene")],
          responses: { "200": { description: "The scene", content: jsonContent(ref("Scene")) }, ...errorResponses(404, ...common) },
        },
      },
      "/api/v1/scenes/{sceneId}/versions": {
        get: {
          tags: ["versions"],
          operationId: "listVersions",
          parameters: [idParam("sceneId", "scene"), ...page],
          responses: { "200": { description: "A page of versions, newest first", content: jsonContent(ref("VersionPage")) }, ...errorResponses(400, 404, ...common) },
        },
        post: {
          tags: ["versions"],
          operationId: "createVersion",
          summary: "Save a new version on top of the head",
          parameters: [idParam("sceneId", "scene")],
          requestBody: { required: true, content: jsonContent(ref("CreateVersionBody")) },
          responses: {
            "201": { description: "Saved; Location names the new version", content: jsonContent(ref("Version")) },
            ...errorResponses(400, 403, 404, 409, 413, 415, 422, ...common),
          },
        },
      },
      "/api/v1/versions/{versionId}": {
        get: {
          tags: ["versions"],
          operationId: "getVersion",
          summary: "One version with its scene document (immutable; ETag)",
          parameters: [idParam("versionId", "version")],
          responses: {
            "200": { description: "The version", headers: { ETag: { schema: { type: "string" } } }, content: jsonContent(ref("Version")) },
            "304": { description: "Not modified (If-None-Match matched)" },
            ...errorResponses(404, ...common),
          },
        },
      },
      "/api/v1/renders": {
        post: {
          tags: ["renders"],
          operationId: "createRender",
          summary: "Queue a render on the pool, or continue a finished render to more samples",
          requestBody: { required: true, content: jsonContent(ref("CreateRenderBody")) },
          responses: {
            "202": { description: "Queued; poll the Location", content: jsonContent(ref("Render")) },
            ...errorResponses(400, 403, 404, 409, 415, 422, 503, ...common),
          },
        },
      },
      "/api/v1/renders/{renderId}": {
        get: {
          tags: ["renders"],
          operationId: "getRender",
          parameters: [idParam("renderId", "render")],
          responses: { "200": { description: "Status, progress, chunks and links", content: jsonContent(ref("Render")) }, ...errorResponses(404, ...common) },
        },
        delete: {
          tags: ["renders"],
          operationId: "cancelRender",
          summary: "Cancel a queued or running pool render",
          parameters: [idParam("renderId", "render")],
          responses: { "200": { description: "Cancelled", content: jsonContent(ref("Render")) }, ...errorResponses(403, 404, 409, ...common) },
        },
      },
      "/api/v1/renders/{renderId}/image.png": {
        get: { tags: ["renders"], operationId: "getRenderPng", parameters: [idParam("renderId", "render")], responses: { "200": binary("image/png", "Display-referred 8-bit sRGB"), ...errorResponses(404, 409, ...common) } },
      },
      "/api/v1/renders/{renderId}/image.hdr": {
        get: { tags: ["renders"], operationId: "getRenderHdr", parameters: [idParam("renderId", "render")], responses: { "200": binary("image/vnd.radiance", "Radiance RGBE, mean radiance"), ...errorResponses(404, 409, ...common) } },
      },
      "/api/v1/renders/{renderId}/image.pfm": {
        get: { tags: ["renders"], operationId: "getRenderPfm", parameters: [idParam("renderId", "render")], responses: { "200": binary("application/x-portable-floatmap", "Portable float map, mean radiance"), ...errorResponses(404, 409, ...common) } },
      },
      "/api/v1/renders/{renderId}/state.bin": {
        get: { tags: ["renders"], operationId: "getRenderState", parameters: [idParam("renderId", "render")], responses: { "200": binary("application/octet-stream", "Serialized exact accumulation"), ...errorResponses(404, 409, ...common) } },
      },
      "/api/v1/renders/{renderId}/groups/{group}.pfm": {
        get: {
          tags: ["renders"],
          operationId: "getRenderGroup",
          parameters: [idParam("renderId", "render"), { name: "group", in: "path", required: true, schema: { type: "string", pattern: "^[A-Za-z0-9_-]{1,64}$" } }],
          responses: { "200": binary("application/x-portable-floatmap", "One light group's mean radiance"), ...errorResponses(404, 409, ...common) },
        },
      },
      "/api/v1/openapi.json": {
        get: { operationId: "getOpenApi", security: [], responses: { "200": { description: "This document", content: { "application/json": {} } } } },
      },
    },
    components: {
      securitySchemes: { bearer: { type: "http", scheme: "bearer", description: "An API token (tw_…) from your account page" } },
      schemas,
    },
  };
  return cached;
}

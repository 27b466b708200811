// GET /api/v1/openapi.json — the OpenAPI 3.1 description of this API (no token needed).
import { json, publicHandler } from "~/services/api.server";
import { openApiDocument } from "~/services/openapi.server";

export const loader = publicHandler(async () => json(openApiDocument(), { headers: { "Cache-Control": "public, max-age=300" } }));

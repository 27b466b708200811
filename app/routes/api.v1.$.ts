// Any other /api/v1/… address: a JSON 404 in the API's error shape rather than the app's HTML page.
import { ApiError, errorResponse } from "~/services/api.server";

function unknownEndpoint({ request }: { request: Request }): Response {
  const path = new URL(request.url).pathname;
  return errorResponse(new ApiError(404, "not_found", `there is no API endpoint ${request.method} ${path}; see /api/v1/openapi.json`));
}

export const loader = unknownEndpoint;
export const action = unknownEndpoint;

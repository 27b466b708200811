// Everything API v1 routes share: one error shape, body and query parsing with zod, bearer authentication
// through the same permissions module as the pages, a per-token rate limit, cursors and ETags.
import { z } from "zod";
import { authorize, getActor, scopeAllows, type Ability, type Actor } from "~/services/permissions.server";
import { BodyTooLargeError, readBodyLimited } from "./body-limit.server";

export type ApiIssue = { path: string; message: string; line?: number; column?: number };

/** Thrown anywhere inside an API handler; becomes `{ error: { code, message, path?, issues? } }`. */
export class ApiError extends Error {
  readonly status: number;
  readonly code: string;
  readonly path?: string;
  readonly issues?: ApiIssue[];
  readonly headers?: Record<string, string>;
  readonly headVersionId?: string;
  constructor(
    status: number,
    code: string,
    message: string,
    extra: { path?: string; issues?: ApiIssue[]; headers?: Record<string, string>; headVersionId?: string } = {},
  ) {
    super(message);
    this.name = "ApiError";
    this.status = status;
    this.code = code;
    this.path = extra.path;
    this.issues = extra.issues;
    this.headers = extra.headers;
    this.headVersionId = extra.headVersionId;
  }
}

export const notFound = (what: string) => new ApiError(404, "not_found", `${what} was not found`);

export function errorBody(err: ApiError) {
  return {
    error: {
      code: err.code,
      message: err.message,
      ...(err.path !== undefined ? { path: err.path } : {}),
      ...(err.issues && err.issues.length > 0 ? { issues: err.issues } : {}),
      ...(err.headVersionId ? { headVersionId: err.headVersionId } : {}),
    },
  };
}

export function json(data: unknown, init: ResponseInit = {}): Response {
  const headers = new Headers(init.headers);
  headers.set("Content-Type", "application/json; charset=utf-8");
  if (!headers.has("Cache-Control")) headers.set("Cache-Control", "no-store");
  return new Response(JSON.stringify(data), { ...init, headers });
}

export function errorResponse(err: ApiError): Response {
  const headers = new Headers(err.headers);
  if (err.status === 401) headers.set("WWW-Authenticate", 'Bearer realm="tracewell"');
  return json(errorBody(err), { status: err.status, headers });
}

/** zod path → the dotted/indexed form used everywhere in Tracewell: `scene.lights[2].shape.radius`. */
export function formatPath(path: readonly PropertyKey[], prefix = ""): string {
  let out = prefix;
  for (const p of path) {
    if (typeof p === "number") out += `[${p}]`;
    else out += out === "" ? String(p) : `.${String(p)}`;
  }
  return out;
}

export function issuesFromZod(error: z.ZodError, prefix = ""): ApiIssue[] {
  return error.issues.map((i) => ({ path: formatPath(i.path, prefix), message: i.message }));
}

export function validationError(issues: ApiIssue[], status = 422): ApiError {
  const first = issues[0];
  const message = first ? (first.path ? `${first.path}: ${first.message}` : first.message) : "the request is invalid";
  const more = issues.length > 1 ? ` (and ${issues.length - 1} more)` : "";
  return new ApiError(status, "validation_failed", message + more, { path: first?.path, issues });
}

const MAX_BODY_BYTES = 8 * 1024 * 1024;

/** Reads a JSON body and parses it with `schema`; every failure names the field. */
export async function parseJsonBody<T extends z.ZodType>(request: Request, schema: T): Promise<z.output<T>> {
  const type = request.headers.get("Content-Type") ?? "";
  if (!/^application\/(.+\+)?json\b/i.test(type)) {
    throw new ApiError(415, "unsupported_media_type", "send the body as JSON with Content-Type: application/json");
  }
  const declared = Number(request.headers.get("Content-Length") ?? "0");
  if (declared > MAX_BODY_BYTES) throw new ApiError(413, "body_too_large", `the body may be at most ${MAX_BODY_BYTES} bytes`);
  let text: string;
  try {
    // Read with the limit even when no length was declared, so an endless chunked body is cut off.
    text = new TextDecoder().decode(await readBodyLimited(request, MAX_BODY_BYTES));
  } catch (e) {
    if (e instanceof BodyTooLargeError) throw new ApiError(413, "body_too_large", `the body may be at most ${MAX_BODY_BYTES} bytes`);
    throw e;
  }
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    const detail = e instanceof Error ? e.message : "not JSON";
    throw new ApiError(400, "invalid_json", `the body is not valid JSON: ${detail}`, { path: "" });
  }
  const parsed = schema.safeParse(raw);
  if (!parsed.success) throw validationError(issuesFromZod(parsed.error));
  return parsed.data;
}

/** Parses the query string; bad values are a 400 naming the parameter. */
export function parseQuery<T extends z.ZodType>(request: Request, schema: T): z.output<T> {
  const url = new URL(request.url);
  const raw: Record<string, string> = {};
  for (const [k, v] of url.searchParams) raw[k] = v;
  const parsed = schema.safeParse(raw);
  if (!parsed.success) throw validationError(issuesFromZod(parsed.error), 400);
  return parsed.data;
}

const IdSchema = z.uuid();

/** A route parameter that must be an id; anything else cannot exist, so it is a 404. */
export function idParam(params: Record<string, string | undefined>, name: string, what: string): string {
  const v = params[name];
  if (!v || !IdSchema.safeParse(v).success) throw notFound(`${what} ${v ?? ""}`.trim());
  return v;
}

// ---------------------------------------------------------------------------------------------------------
// Cursors: opaque to clients (base64url of a small JSON array), validated on the way back in.

export function encodeCursor(values: readonly (string | number)[]): string {
  return Buffer.from(JSON.stringify(values), "utf8").toString("base64url");
}

export function decodeCursor<T extends z.ZodType>(raw: string | undefined, schema: T): z.output<T> | undefined {
  if (raw === undefined || raw === "") return undefined;
  let value: unknown;
  try {
    value = JSON.parse(Buffer.from(raw, "base64url").toString("utf8"));
  } catch {
    throw new ApiError(400, "invalid_cursor", "cursor is not one this API handed out", { path: "cursor" });
  }
  const parsed = schema.safeParse(value);
  if (!parsed.success) throw new ApiError(400, "invalid_cursor", "cursor is not one this API handed out", { path: "cursor" });
  return parsed.data;
}

/** Keyset cursor over (created_at desc, id desc): PostgreSQL's text time stamp and the id of a page's last row. */
export const TimeIdCursor = z.tuple([z.string().regex(/^\d{4}-\d{2}-\d{2} \d{2}:\d{2}:\d{2}(\.\d{1,6})?[+-]\d{2}(:\d{2})?$/), z.uuid()]);
export const NumberCursor = z.tuple([z.number().int().min(1)]);

/** A page response with a `Link: <…>; rel="next"` header as well as `nextCursor` in the body. */
export function pageResponse(request: Request, items: unknown[], nextCursor: string | null, extraHeaders: HeadersInit = {}): Response {
  const headers = new Headers(extraHeaders);
  if (nextCursor) {
    const next = new URL(request.url);
    next.searchParams.set("cursor", nextCursor);
    headers.set("Link", `<${next.pathname}${next.search}>; rel="next"`);
  }
  return json({ items, nextCursor }, { headers });
}

/** Fetch limit+1 rows, return `limit` of them and the cursor of the last one when there are more. */
export function slicePage<T>(rows: T[], limit: number, cursorOf: (row: T) => (string | number)[]): { items: T[]; nextCursor: string | null } {
  if (rows.length <= limit) return { items: rows, nextCursor: null };
  const items = rows.slice(0, limit);
  return { items, nextCursor: encodeCursor(cursorOf(items[items.length - 1])) };
}

// ---------------------------------------------------------------------------------------------------------
// ETags for immutable things (versions, finished render files): strong validators, If-None-Match → 304.

export function etagMatches(request: Request, etag: string): boolean {
  const header = request.headers.get("If-None-Match");
  if (!header) return false;
  if (header.trim() === "*") return true;
  return header.split(",").some((t) => t.trim().replace(/^W\//, "") === etag);
}

export function immutableHeaders(etag: string): Record<string, string> {
  // private: the content is only for members; immutable: the same URL never changes content.
  return { ETag: etag, "Cache-Control": "private, max-age=31536000, immutable" };
}

export function notModified(etag: string): Response {
  return new Response(null, { status: 304, headers: immutableHeaders(etag) });
}

// ---------------------------------------------------------------------------------------------------------
// Per-token rate limit: a token bucket per API token (or per signed-in user for cookie requests) in this
// server process. Limits come from the environment so load tests and big studios can raise them.

const RateEnvSchema = z.object({
  API_RATE_LIMIT_PER_SECOND: z.coerce.number().positive().default(10),
  API_RATE_LIMIT_BURST: z.coerce.number().int().min(1).default(120),
});

type Bucket = { tokens: number; at: number };
const buckets = new Map<string, Bucket>();
let rateConfig: z.output<typeof RateEnvSchema> | undefined;

function rates() {
  rateConfig ??= RateEnvSchema.parse({
    API_RATE_LIMIT_PER_SECOND: process.env.API_RATE_LIMIT_PER_SECOND || undefined,
    API_RATE_LIMIT_BURST: process.env.API_RATE_LIMIT_BURST || undefined,
  });
  return rateConfig;
}

export type RateDecision = { allowed: boolean; limit: number; remaining: number; retryAfterSeconds: number };

export function takeRateToken(key: string, now = Date.now()): RateDecision {
  const { API_RATE_LIMIT_PER_SECOND: perSecond, API_RATE_LIMIT_BURST: burst } = rates();
  let b = buckets.get(key);
  if (!b) {
    if (buckets.size > 50_000) pruneBuckets(now, perSecond, burst);
    b = { tokens: burst, at: now };
    buckets.set(key, b);
  }
  b.tokens = Math.min(burst, b.tokens + ((now - b.at) / 1000) * perSecond);
  b.at = now;
  if (b.tokens >= 1) {
    b.tokens -= 1;
    return { allowed: true, limit: burst, remaining: Math.floor(b.tokens), retryAfterSeconds: 0 };
  }
  return { allowed: false, limit: burst, remaining: 0, retryAfterSeconds: Math.max(1, Math.ceil((1 - b.tokens) / perSecond)) };
}

function pruneBuckets(now: number, perSecond: number, burst: number) {
  for (const [k, b] of buckets) {
    if (b.tokens + ((now - b.at) / 1000) * perSecond >= burst) buckets.delete(k);
  }
}

function rateHeaders(d: RateDecision): Record<string, string> {
  return { "RateLimit-Limit": String(d.limit), "RateLimit-Remaining": String(d.remaining) };
}

// ---------------------------------------------------------------------------------------------------------
// The handler wrapper.

export type AuthedActor = Exclude<Actor, { kind: "anonymous" }>;

export type ApiContext = {
  request: Request;
  params: Record<string, string | undefined>;
  actor: AuthedActor;
};

type RouteArgs = { request: Request; params: Record<string, string | undefined> };

/**
 * Wraps a resource-route loader/action: authenticates (Bearer token or session cookie), applies the rate
 * limit, and turns every thrown ApiError or unexpected failure into the one JSON error shape.
 */
export function apiHandler(handler: (ctx: ApiContext) => Promise<Response>) {
  return async ({ request, params }: RouteArgs): Promise<Response> => {
    let headers: Record<string, string> = {};
    try {
      const actor = await getActor(request);
      if (actor.kind === "anonymous") {
        const hasAuth = request.headers.has("Authorization");
        throw new ApiError(
          401,
          "unauthenticated",
          hasAuth ? "the API token is unknown, expired or revoked" : "send an API token as `Authorization: Bearer <token>`",
        );
      }
      const key = actor.kind === "token" ? `token:${actor.tokenId}` : `user:${actor.user.id}`;
      const decision = takeRateToken(key);
      headers = rateHeaders(decision);
      if (!decision.allowed) {
        throw new ApiError(429, "rate_limited", `too many requests for this token; retry in ${decision.retryAfterSeconds} s`, {
          headers: { "Retry-After": String(decision.retryAfterSeconds) },
        });
      }
      const res = await handler({ request, params, actor });
      for (const [k, v] of Object.entries(headers)) if (!res.headers.has(k)) res.headers.set(k, v);
      return res;
    } catch (err) {
      const apiErr = toApiError(err);
      const res = errorResponse(apiErr);
      for (const [k, v] of Object.entries(headers)) res.headers.set(k, v);
      return res;
    }
  };
}

/** For routes without authentication (the OpenAPI document). */
export function publicHandler(handler: (args: RouteArgs) => Promise<Response>) {
  return async (args: RouteArgs): Promise<Response> => {
    try {
      return await handler(args);
    } catch (err) {
      return errorResponse(toApiError(err));
    }
  };
}

export function toApiError(err: unknown): ApiError {
  if (err instanceof ApiError) return err;
  if (err instanceof Response) {
    // A helper written for pages threw a Response (redirect or status); keep its status, use our shape.
    const status = err.status >= 400 ? err.status : 401;
    return new ApiError(status, status === 404 ? "not_found" : status === 401 ? "unauthenticated" : "error", err.statusText || "request refused");
  }
  console.error("api: unexpected error", err);
  return new ApiError(500, "internal", "the server failed to handle this request; it has been logged");
}

export function methodNotAllowed(allowed: string[]): ApiError {
  return new ApiError(405, "method_not_allowed", `use ${allowed.join(" or ")}`, { headers: { Allow: allowed.join(", ") } });
}

type Target = Parameters<typeof authorize>[1];

/**
 * Checks an ability. Unknown or invisible things are 404 (existence is not revealed); a caller who can see
 * the thing but lacks the ability (a read-only token trying to render) gets 403 so scripts know why.
 */
export async function requireAbility(actor: AuthedActor, target: Target, ability: Ability, what: string): Promise<{ projectId: string }> {
  const res = await authorize(actor, target, ability);
  if (res.ok) return { projectId: res.projectId };
  if (ability !== "view") {
    const view = await authorize(actor, target, "view");
    if (view.ok) {
      const scopeRefuses = actor.kind === "token" && !scopeAllows(actor.scope, ability);
      const why = scopeRefuses && actor.kind === "token" ? `a token of scope "${actor.scope}"` : `your role "${view.role}"`;
      throw new ApiError(403, "forbidden", `${why} does not allow "${ability}" on this ${what.split(" ")[0]}`);
    }
  }
  throw notFound(what);
}

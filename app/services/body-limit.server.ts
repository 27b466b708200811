// Reads a request body but never more than `limit` bytes, whether or not the client declared a length:
// a chunked upload is cut off (413) as soon as it passes the limit instead of being buffered whole.
export class BodyTooLargeError extends Error {
  constructor(readonly limit: number) {
    super(`the upload is larger than the ${limit}-byte limit`);
    this.name = "BodyTooLargeError";
  }
}

export async function readBodyLimited(request: Request, limit: number): Promise<Uint8Array> {
  const declared = Number(request.headers.get("content-length") ?? "NaN");
  if (Number.isFinite(declared) && declared > limit) throw new BodyTooLargeError(limit);
  if (!request.body) return new Uint8Array(0);
  const reader = request.body.getReader();
  const chunks: Uint8Array[] = [];
  let total = 0;
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    total += value.byteLength;
    if (total > limit) {
      await reader.cancel().catch(() => undefined);
      throw new BodyTooLargeError(limit);
    }
    chunks.push(value);
  }
  const out = new Uint8Array(total);
  let o = 0;
  for (const c of chunks) {
    out.set(c, o);
    o += c.byteLength;
  }
  return out;
}

/** multipart/form-data or urlencoded, parsed from a body read with the limit above. */
export async function formDataLimited(request: Request, limit: number): Promise<FormData> {
  const bytes = await readBodyLimited(request, limit);
  return new Response(new Blob([bytes.slice().buffer as ArrayBuffer]), { headers: { "content-type": request.headers.get("content-type") ?? "" } }).formData();
}

/** The body within `limit` bytes, or a 413 answer naming the limit thrown for the route to return. */
async function bodyOr413(request: Request, limit: number): Promise<Uint8Array> {
  try {
    return await readBodyLimited(request, limit);
  } catch (e) {
    if (e instanceof BodyTooLargeError) throw Response.json({ error: e.message }, { status: 413 });
    throw e;
  }
}

/** A page form parsed from at most `limit` bytes; beyond that the route answers 413. */
export async function pageForm(request: Request, limit: number): Promise<FormData> {
  const bytes = await bodyOr413(request, limit);
  return new Response(new Blob([bytes.slice().buffer as ArrayBuffer]), { headers: { "content-type": request.headers.get("content-type") ?? "" } }).formData();
}

/** Ordinary page forms (a few ids and a message): refused beyond 64 KiB. */
export async function smallForm(request: Request): Promise<FormData> {
  return pageForm(request, 64 * 1024);
}

/**
 * A copy of `request` whose body has been read with the small-form limit, for code that insists on reading
 * the body itself (the sign-in strategy): it then sees at most 64 KiB, never an endless stream.
 */
export async function smallFormRequest(request: Request): Promise<Request> {
  const bytes = await bodyOr413(request, 64 * 1024);
  return new Request(request.url, { method: request.method, headers: request.headers, body: bytes.slice().buffer as ArrayBuffer });
}

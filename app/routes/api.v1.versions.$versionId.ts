// GET /api/v1/versions/:versionId — one version with its scene document. Versions never change, so the
// answer carries a strong ETag and If-None-Match gets 304.
import { getVersion } from "~/models/scene.server";
import { apiHandler, etagMatches, idParam, immutableHeaders, json, methodNotAllowed, notFound, notModified, requireAbility } from "~/services/api.server";
import { presentVersion } from "~/services/api-present.server";

export const loader = apiHandler(async ({ request, params, actor }) => {
  const versionId = idParam(params, "versionId", "version");
  await requireAbility(actor, { versionId }, "view", `version ${versionId}`);
  const etag = `"version-${versionId}"`;
  if (etagMatches(request, etag)) return notModified(etag);
  const version = await getVersion(versionId);
  if (!version) throw notFound(`version ${versionId}`);
  return json(presentVersion(version), { headers: immutableHeaders(etag) });
});

export const action = apiHandler(async () => {
  throw methodNotAllowed(["GET"]);
});

// GET /api/v1/projects/:projectId — one project and the caller's role in it.
import { getProject } from "~/models/project.server";
import { apiHandler, idParam, json, methodNotAllowed, notFound, requireAbility } from "~/services/api.server";
import { presentProject } from "~/services/api-present.server";
import { authorize } from "~/services/permissions.server";

export const loader = apiHandler(async ({ params, actor }) => {
  const projectId = idParam(params, "projectId", "project");
  await requireAbility(actor, { projectId }, "view", `project ${projectId}`);
  const [project, decision] = await Promise.all([getProject(projectId), authorize(actor, { projectId }, "view")]);
  if (!project || !decision.ok) throw notFound(`project ${projectId}`);
  return json(presentProject(project, decision.role));
});

export const action = apiHandler(async () => {
  throw methodNotAllowed(["GET"]);
});

// Layout of one project: its name, your role, and the tab bar. Every tab below checks access itself too.
import { Outlet } from "react-router";
import { ProjectTabs, RoleBadge } from "~/components/project/project-tabs";
import { getProject } from "~/models/project.server";
import { requireAccess } from "~/services/permissions.server";
import { notFound } from "~/services/project-access.server";
import type { Route } from "./+types/projects.$projectId";

export const meta: Route.MetaFunction = ({ data }) => [{ title: data ? `${data.project.name} · Tracewell` : "Tracewell" }];

export async function loader({ request, params }: Route.LoaderArgs) {
  const { role } = await requireAccess(request, { projectId: params.projectId }, "view");
  const project = await getProject(params.projectId);
  if (!project) notFound();
  return { project: { id: project.id, name: project.name, description: project.description }, role };
}

export default function ProjectLayout({ loaderData }: Route.ComponentProps) {
  const { project, role } = loaderData;
  return (
    <div className="flex min-h-full flex-col">
      <div className="flex items-center gap-3 px-6 pt-5 pb-3">
        <h1 className="text-xl font-bold" data-testid="project-name">
          {project.name}
        </h1>
        <RoleBadge role={role} />
      </div>
      <ProjectTabs projectId={project.id} role={role} />
      <div className="flex-1">
        <Outlet />
      </div>
    </div>
  );
}

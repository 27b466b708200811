// Layout route for signed-in pages: fills the account menu and the project list from the session.
// It does not refuse anyone itself; each page below checks access for what it shows.
import { Outlet } from "react-router";
import { AppShell } from "~/components/shell/app-shell";
import { listProjectsForUser } from "~/models/project.server";
import { getActor } from "~/services/permissions.server";
import type { Route } from "./+types/app-shell";

export async function loader({ request }: Route.LoaderArgs) {
  const actor = await getActor(request);
  if (actor.kind === "anonymous") return { user: null, projects: [] };
  const projects = await listProjectsForUser(actor.user.id);
  return { user: actor.user, projects: projects.map((p) => ({ id: p.id, name: p.name, role: p.role })) };
}

export default function AppShellLayout({ loaderData }: Route.ComponentProps) {
  return (
    <AppShell user={loaderData.user} projects={loaderData.projects}>
      <Outlet />
    </AppShell>
  );
}

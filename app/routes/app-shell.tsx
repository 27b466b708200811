// Layout route for signed-in pages. The accounts feature fills `user` and `projects` from the session.
import { Outlet } from "react-router";
import { AppShell } from "~/components/shell/app-shell";
import type { Route } from "./+types/app-shell";

export async function loader(_: Route.LoaderArgs) {
  return { user: null, projects: [] };
}

export default function AppShellLayout({ loaderData }: Route.ComponentProps) {
  return (
    <AppShell user={loaderData.user} projects={loaderData.projects}>
      <Outlet />
    </AppShell>
  );
}

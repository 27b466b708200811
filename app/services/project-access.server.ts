// Every page under /projects/:projectId/… also checks that the thing it names lives in *that* project, so a
// scene id pasted under another project's URL is a 404, never a view through the wrong door.
import { data } from "react-router";
import type { Ability } from "~/lib/roles";
import { requireAccess, type Target } from "./permissions.server";

export function notFound(message = "There is nothing at this address, or you may not see it."): never {
  throw data(message, { status: 404 });
}

export async function requireInProject(request: Request, projectId: string | undefined, target: Target, ability: Ability) {
  const access = await requireAccess(request, target, ability);
  if (!projectId || access.projectId !== projectId) notFound();
  return access;
}

export function actorUserId(actor: { kind: string; user?: { id: string } }): string | null {
  return actor.user?.id ?? null;
}

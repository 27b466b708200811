import { asc, eq } from "drizzle-orm";
import { memberships, projects } from "~/db/schema";
import type { Role } from "~/lib/roles";
import { db } from "~/services/db.server";
import { logActivity } from "./activity.server";

export type Project = typeof projects.$inferSelect;

/** Creates a project; its creator becomes its first owner in the same transaction. */
export async function createProject(input: { name: string; description?: string; ownerId: string }): Promise<Project> {
  return db().transaction(async (tx) => {
    const [project] = await tx
      .insert(projects)
      .values({ name: input.name.trim(), description: input.description?.trim() ?? "", createdBy: input.ownerId })
      .returning();
    await tx.insert(memberships).values({ projectId: project.id, userId: input.ownerId, role: "owner" });
    await logActivity(project.id, input.ownerId, "project.created", { name: project.name }, tx);
    return project;
  });
}

export async function getProject(projectId: string): Promise<Project | undefined> {
  return db().query.projects.findFirst({ where: eq(projects.id, projectId) });
}

export async function listProjectsForUser(userId: string): Promise<(Project & { role: Role })[]> {
  const rows = await db()
    .select({ project: projects, role: memberships.role })
    .from(memberships)
    .innerJoin(projects, eq(projects.id, memberships.projectId))
    .where(eq(memberships.userId, userId))
    .orderBy(asc(projects.name));
  return rows.map((r) => ({ ...r.project, role: r.role }));
}

export async function renameProject(projectId: string, name: string, description: string): Promise<void> {
  await db().update(projects).set({ name: name.trim(), description: description.trim() }).where(eq(projects.id, projectId));
}

export async function deleteProject(projectId: string): Promise<void> {
  await db().delete(projects).where(eq(projects.id, projectId));
}

// The demo studio's people and projects. Idempotent: running it again adds only what is missing and never
// changes a password or a role someone has since edited. The passwords are for local demos only.
import { and, eq } from "drizzle-orm";
import type { Role } from "~/lib/roles";
import type { Database } from "~/services/db.server";
import { hashPassword } from "~/services/password.server";
import { memberships, projects, users } from "./schema";

export const DEMO_PASSWORD = "harrow-lane-demo";

export const DEMO_PEOPLE = {
  maren: { email: "maren@harrowlane.example", name: "Maren Oduya" },
  tobias: { email: "tobias@harrowlane.example", name: "Tobias Reyne" },
  ines: { email: "ines@harrowlane.example", name: "Ines Calder" },
  priya: { email: "priya@harrowlane.example", name: "Priya Anand" },
  jonah: { email: "jonah@harrowlane.example", name: "Jonah Pell" },
} as const;
export type DemoPerson = keyof typeof DEMO_PEOPLE;

export const DEMO_PROJECTS = {
  kettle: {
    name: "Wren kettle packshots",
    description: "Studio packshots of the ceramic Wren kettle and the glass carafe for the spring catalogue.",
    createdBy: "maren",
    members: { maren: "owner", tobias: "editor", ines: "editor", priya: "viewer", jonah: "viewer" },
  },
  lamp: {
    name: "Osier lamp launch",
    description: "Lighting studies for the Osier desk lamp in the reading-room set.",
    createdBy: "ines",
    members: { ines: "owner", maren: "owner", tobias: "editor", jonah: "viewer" },
  },
} as const satisfies Record<string, { name: string; description: string; createdBy: DemoPerson; members: Partial<Record<DemoPerson, Role>> }>;
export type DemoProject = keyof typeof DEMO_PROJECTS;

export type SeededAccounts = { people: Record<DemoPerson, string>; projects: Record<DemoProject, string> };

export async function seedAccounts(db: Database): Promise<SeededAccounts> {
  const passwordHash = await hashPassword(DEMO_PASSWORD);
  const people = {} as Record<DemoPerson, string>;
  for (const key of Object.keys(DEMO_PEOPLE) as DemoPerson[]) {
    const p = DEMO_PEOPLE[key];
    await db.insert(users).values({ email: p.email, name: p.name, passwordHash }).onConflictDoNothing({ target: users.email });
    const row = await db.query.users.findFirst({ where: eq(users.email, p.email), columns: { id: true } });
    if (!row) throw new Error(`seed: could not create ${p.email}`);
    people[key] = row.id;
  }

  const seeded = {} as Record<DemoProject, string>;
  for (const key of Object.keys(DEMO_PROJECTS) as DemoProject[]) {
    const spec = DEMO_PROJECTS[key];
    const creator = people[spec.createdBy];
    let project = await db.query.projects.findFirst({ where: and(eq(projects.name, spec.name), eq(projects.createdBy, creator)), columns: { id: true } });
    if (!project) {
      [project] = await db.insert(projects).values({ name: spec.name, description: spec.description, createdBy: creator }).returning({ id: projects.id });
    }
    for (const [person, role] of Object.entries(spec.members) as [DemoPerson, Role][]) {
      await db.insert(memberships).values({ projectId: project.id, userId: people[person], role }).onConflictDoNothing();
    }
    seeded[key] = project.id;
  }
  return { people, projects: seeded };
}

import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { RoleBadge } from "~/components/project/project-tabs";
import { Button, Field, Input, Notice, Panel, TextArea } from "~/components/ui";
import { fieldErrors, formObject } from "~/lib/form";
import { createProject, listProjectsForUser } from "~/models/project.server";
import { requireUser } from "~/services/permissions.server";
import type { Route } from "./+types/projects._index";
import { smallForm } from "~/services/body-limit.server";

export const meta: Route.MetaFunction = () => [{ title: "Projects · Tracewell" }];

const CreateProjectSchema = z.object({
  name: z.string({ error: "Name is required" }).trim().min(1, "Name is required").max(80, "Name must be at most 80 characters"),
  description: z.string().trim().max(500, "Description must be at most 500 characters").default(""),
});

export async function loader({ request }: Route.LoaderArgs) {
  const actor = await requireUser(request);
  const projects = await listProjectsForUser(actor.user.id);
  return { projects: projects.map((p) => ({ id: p.id, name: p.name, description: p.description, role: p.role, createdAt: p.createdAt.toISOString() })) };
}

export async function action({ request }: Route.ActionArgs) {
  const actor = await requireUser(request);
  const raw = formObject(await smallForm(request));
  const parsed = CreateProjectSchema.safeParse(raw);
  if (!parsed.success) return data({ errors: fieldErrors(parsed.error), values: { name: raw.name ?? "", description: raw.description ?? "" } }, { status: 400 });
  const project = await createProject({ ...parsed.data, ownerId: actor.user.id });
  return redirect(`/projects/${project.id}`);
}

export default function Projects({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const errors: Record<string, string | undefined> = actionData?.errors ?? {};
  return (
    <div className="mx-auto flex max-w-5xl flex-col gap-6 p-6">
      <h1 className="text-xl font-bold">Projects</h1>
      {loaderData.projects.length === 0 ? (
        <Notice>You are not on any project yet. Start one below, or open an invitation a teammate e-mailed you.</Notice>
      ) : (
        <ul className="grid gap-3 sm:grid-cols-2" aria-label="Your projects">
          {loaderData.projects.map((p) => (
            <li key={p.id}>
              <Link to={`/projects/${p.id}`} className="block rounded-[var(--radius-panel)] border border-line bg-panel p-4 hover:border-ink-faint">
                <span className="flex items-center justify-between gap-2">
                  <span className="font-medium">{p.name}</span>
                  <RoleBadge role={p.role} />
                </span>
                {p.description ? <span className="mt-1 block text-sm text-ink-muted">{p.description}</span> : null}
              </Link>
            </li>
          ))}
        </ul>
      )}
      <Panel title="New project" className="max-w-xl">
        <Form method="post" className="flex flex-col gap-4" noValidate>
          <p className="text-sm text-ink-muted">You become its owner and can invite the rest of the team.</p>
          <Field label="Name" error={errors.name}>
            {(p) => <Input {...p} name="name" defaultValue={actionData?.values.name ?? ""} placeholder="Wren kettle packshots" required />}
          </Field>
          <Field label="Description (optional)" error={errors.description}>
            {(p) => <TextArea {...p} name="description" rows={2} defaultValue={actionData?.values.description ?? ""} />}
          </Field>
          <div>
            <Button type="submit" tone="primary" disabled={busy}>
              Create project
            </Button>
          </div>
        </Form>
      </Panel>
    </div>
  );
}

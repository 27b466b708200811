// Members tab: who is on the project and in which role. Everyone on the project sees the list; owners also
// invite, change roles, remove people and withdraw invitations. Anyone may leave, except the last owner.
import { data, Form, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { RoleBadge } from "~/components/project/project-tabs";
import { Button, Field, Input, Notice, Panel, Select, Table, Td, Th, IntentButton } from "~/components/ui";
import { EmailSchema } from "~/lib/account-schemas";
import { fieldErrors, formObject } from "~/lib/form";
import { ROLE_DESCRIPTIONS, ROLES } from "~/lib/roles";
import { createInvitation, listPendingInvitations, revokeInvitation } from "~/models/invitation.server";
import { changeRole, listMembers, removeMember } from "~/models/membership.server";
import { logActivity } from "~/models/activity.server";
import { deleteProject, getProject, renameProject } from "~/models/project.server";
import { sendInvitationMail } from "~/services/account-mail.server";
import { requireAccess } from "~/services/permissions.server";
import type { Route } from "./+types/projects.$projectId.members";
import { smallForm } from "~/services/body-limit.server";

export const meta: Route.MetaFunction = () => [{ title: "Members · Tracewell" }];

const RoleSchema = z.enum(ROLES, { error: "Role must be owner, editor or viewer" });
const MembersActionSchema = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("invite"), email: EmailSchema, role: RoleSchema }),
  z.object({ intent: z.literal("change-role"), userId: z.uuid("Member is not valid"), role: RoleSchema }),
  z.object({ intent: z.literal("remove"), userId: z.uuid("Member is not valid") }),
  z.object({ intent: z.literal("revoke-invitation"), invitationId: z.uuid("Invitation is not valid") }),
  z.object({ intent: z.literal("leave") }),
  z.object({
    intent: z.literal("rename"),
    name: z.string().trim().min(1, "Name is required").max(80, "Name must be at most 80 characters"),
    description: z.string().trim().max(500, "Description must be at most 500 characters").default(""),
  }),
  z.object({ intent: z.literal("delete-project"), confirmName: z.string().trim().min(1, "Type the project's name to confirm") }),
], { error: "Unknown action" });

// Which ability each action needs; anything unknown needs the most, so a typo never widens access.
function abilityFor(intent: string | undefined): "view" | "manage" | "delete" {
  if (intent === "leave") return "view";
  if (intent === "delete-project") return "delete";
  return "manage";
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { actor, role } = await requireAccess(request, { projectId: params.projectId }, "view");
  const [members, invitations] = await Promise.all([
    listMembers(params.projectId),
    role === "owner" ? listPendingInvitations(params.projectId) : Promise.resolve([]),
  ]);
  const project = await getProject(params.projectId);
  return {
    project: { name: project?.name ?? "", description: project?.description ?? "" },
    me: actor.user.id,
    role,
    members: members.map((m) => ({ ...m, joinedAt: m.joinedAt.toISOString() })),
    invitations: invitations.map((i) => ({ id: i.id, email: i.email, role: i.role, expiresAt: i.expiresAt.toISOString() })),
  };
}

const LAST_OWNER = "A project always keeps at least one owner: make someone else an owner first.";

export async function action({ request, params }: Route.ActionArgs) {
  const projectId = params.projectId;
  const raw = formObject(await smallForm(request));
  // Leaving needs only membership; everything else is an owner's job. Checked before the form is read for meaning.
  const access = await requireAccess(request, { projectId }, abilityFor(raw.intent));
  const me = access.actor.user;
  const parsed = MembersActionSchema.safeParse(raw);
  if (!parsed.success) return data({ ok: false as const, intent: raw.intent ?? "", errors: fieldErrors(parsed.error), values: raw }, { status: 400 });
  const input = parsed.data;

  switch (input.intent) {
    case "invite": {
      const members = await listMembers(projectId);
      if (members.some((m) => m.email === input.email.toLowerCase())) {
        return data({ ok: false as const, intent: input.intent, errors: { email: `${input.email} is already on this project.` }, values: raw }, { status: 409 });
      }
      const project = await getProject(projectId);
      if (!project) throw data("Not found", { status: 404 });
      const { token, invitation } = await createInvitation({ projectId, email: input.email, role: input.role, invitedBy: me.id });
      try {
        await sendInvitationMail({ to: invitation.email, token, projectName: project.name, role: input.role, inviterName: me.name });
      } catch {
        // An invitation nobody received would only confuse the list; withdraw it and say so.
        await revokeInvitation(projectId, invitation.id, me.id);
        return data({ ok: false as const, intent: input.intent, errors: { form: "The invitation e-mail could not be sent. Nothing was kept; try again in a moment." }, values: raw }, { status: 502 });
      }
      return data({ ok: true as const, intent: input.intent, message: `Invitation sent to ${invitation.email}.` });
    }
    case "change-role": {
      const result = await changeRole(projectId, input.userId, input.role, me.id);
      if (!result.ok) {
        const message = result.reason === "last-owner" ? LAST_OWNER : "That person is not on this project.";
        return data({ ok: false as const, intent: input.intent, errors: { form: message }, values: raw }, { status: result.reason === "last-owner" ? 409 : 400 });
      }
      return data({ ok: true as const, intent: input.intent, message: "Role changed." });
    }
    case "remove": {
      const result = await removeMember(projectId, input.userId, me.id);
      if (!result.ok) {
        const message = result.reason === "last-owner" ? LAST_OWNER : "That person is not on this project.";
        return data({ ok: false as const, intent: input.intent, errors: { form: message }, values: raw }, { status: result.reason === "last-owner" ? 409 : 400 });
      }
      if (input.userId === me.id) return redirect("/projects");
      return data({ ok: true as const, intent: input.intent, message: "Removed from the project." });
    }
    case "revoke-invitation": {
      const done = await revokeInvitation(projectId, input.invitationId, me.id);
      if (!done) return data({ ok: false as const, intent: input.intent, errors: { form: "That invitation is no longer open." }, values: raw }, { status: 400 });
      return data({ ok: true as const, intent: input.intent, message: "Invitation withdrawn." });
    }
    case "rename": {
      await renameProject(projectId, input.name, input.description);
      await logActivity(projectId, me.id, "project.renamed", { name: input.name });
      return data({ ok: true as const, intent: input.intent, message: "Project details saved." });
    }
    case "delete-project": {
      const project = await getProject(projectId);
      if (!project) throw data("Not found", { status: 404 });
      if (input.confirmName !== project.name) {
        return data({ ok: false as const, intent: input.intent, errors: { confirmName: "The name does not match; nothing was deleted." }, values: raw }, { status: 400 });
      }
      await deleteProject(projectId);
      return redirect("/projects");
    }
    case "leave": {
      const result = await removeMember(projectId, me.id, me.id);
      if (!result.ok) {
        return data({ ok: false as const, intent: input.intent, errors: { form: LAST_OWNER }, values: raw }, { status: 409 });
      }
      return redirect("/projects");
    }
  }
}

export default function Members({ loaderData, actionData }: Route.ComponentProps) {
  const { members, invitations, role, me, project } = loaderData;
  const busy = useNavigation().state === "submitting";
  const isOwner = role === "owner";
  const errors: Record<string, string | undefined> = actionData && !actionData.ok ? actionData.errors : {};
  return (
    <div className="flex max-w-5xl flex-col gap-6 p-6">
      {actionData?.ok ? <Notice tone="ok">{actionData.message}</Notice> : null}
      {errors.form ? <Notice tone="danger">{errors.form}</Notice> : null}

      <Panel title="Members">
        <Table>
          <thead>
            <tr>
              <Th>Name</Th>
              <Th>E-mail</Th>
              <Th>Role</Th>
              <Th>
                <span className="sr-only">Actions</span>
              </Th>
            </tr>
          </thead>
          <tbody>
            {members.map((m) => (
              <tr key={m.userId} data-testid={`member-${m.email}`}>
                <Td>
                  {m.name}
                  {m.userId === me ? <span className="ml-1 text-xs text-ink-faint">(you)</span> : null}
                </Td>
                <Td className="text-ink-muted">{m.email}</Td>
                <Td>
                  {isOwner ? (
                    <Form method="post" className="flex items-center gap-2">
                      <input type="hidden" name="intent" value="change-role" />
                      <input type="hidden" name="userId" value={m.userId} />
                      <Select name="role" defaultValue={m.role} aria-label={`Role of ${m.name}`} className="h-7 w-28 text-xs">
                        {ROLES.map((r) => (
                          <option key={r} value={r}>
                            {ROLE_DESCRIPTIONS[r].label}
                          </option>
                        ))}
                      </Select>
                      <Button type="submit" size="sm" disabled={busy}>
                        Change
                      </Button>
                    </Form>
                  ) : (
                    <RoleBadge role={m.role} />
                  )}
                </Td>
                <Td className="text-right">
                  {m.userId === me ? (
                    <IntentButton intent="leave" tone="danger" disabled={busy}>
                      Leave project
                    </IntentButton>
                  ) : isOwner ? (
                    <IntentButton intent="remove" fields={{ userId: m.userId }} tone="danger" disabled={busy} aria-label={`Remove ${m.name}`}>
                      Remove
                    </IntentButton>
                  ) : null}
                </Td>
              </tr>
            ))}
          </tbody>
        </Table>
      </Panel>

      {isOwner ? (
        <Panel title="Invite someone">
          <Form method="post" className="flex flex-wrap items-end gap-3" noValidate>
            <input type="hidden" name="intent" value="invite" />
            <div className="min-w-64 flex-1">
              <Field label="E-mail" error={errors.email}>
                {(p) => <Input {...p} name="email" type="email" placeholder="colleague@harrowlane.example" defaultValue={actionData && !actionData.ok && actionData.intent === "invite" ? (actionData.values.email ?? "") : ""} />}
              </Field>
            </div>
            <div className="w-40">
              <Field label="Role" error={errors.role}>
                {(p) => (
                  <Select {...p} name="role" defaultValue="editor">
                    {ROLES.map((r) => (
                      <option key={r} value={r}>
                        {ROLE_DESCRIPTIONS[r].label}
                      </option>
                    ))}
                  </Select>
                )}
              </Field>
            </div>
            <Button type="submit" tone="primary" disabled={busy}>
              Send invitation
            </Button>
          </Form>
          {invitations.length ? (
            <div className="mt-5">
              <h3 className="mb-2 text-xs font-medium text-ink-muted">Waiting for an answer</h3>
              <Table>
                <tbody>
                  {invitations.map((i) => (
                    <tr key={i.id}>
                      <Td>{i.email}</Td>
                      <Td>
                        <RoleBadge role={i.role} />
                      </Td>
                      <Td className="text-ink-muted">expires {new Date(i.expiresAt).toLocaleDateString()}</Td>
                      <Td className="text-right">
                        <IntentButton intent="revoke-invitation" fields={{ invitationId: i.id }} tone="quiet" disabled={busy}>
                          Withdraw
                        </IntentButton>
                      </Td>
                    </tr>
                  ))}
                </tbody>
              </Table>
            </div>
          ) : null}
        </Panel>
      ) : null}

      {isOwner ? (
        <Panel title="Project">
          <div className="grid gap-6 md:grid-cols-2">
            <Form method="post" className="flex flex-col gap-3" noValidate>
              <input type="hidden" name="intent" value="rename" />
              <Field label="Name" error={errors.name}>
                {(p) => <Input {...p} name="name" defaultValue={project.name} />}
              </Field>
              <Field label="Description" error={errors.description}>
                {(p) => <Input {...p} name="description" defaultValue={project.description} />}
              </Field>
              <div>
                <Button type="submit" disabled={busy}>
                  Save details
                </Button>
              </div>
            </Form>
            <Form method="post" className="flex flex-col gap-3" noValidate>
              <input type="hidden" name="intent" value="delete-project" />
              <p className="text-sm text-ink-muted">
                Deleting removes every scene, version, render, asset and share link of this project for everyone. It cannot be undone.
              </p>
              <Field label={`Type "${project.name}" to confirm`} error={errors.confirmName}>
                {(p) => <Input {...p} name="confirmName" autoComplete="off" />}
              </Field>
              <div>
                <Button type="submit" tone="danger" disabled={busy}>
                  Delete project
                </Button>
              </div>
            </Form>
          </div>
        </Panel>
      ) : null}

      <Panel title="What each role may do">
        <dl className="grid gap-3 text-sm sm:grid-cols-3">
          {ROLES.map((r) => (
            <div key={r}>
              <dt className="font-medium">{ROLE_DESCRIPTIONS[r].label}</dt>
              <dd className="mt-1 text-ink-muted">{ROLE_DESCRIPTIONS[r].summary}</dd>
            </div>
          ))}
        </dl>
      </Panel>
    </div>
  );
}

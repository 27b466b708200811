// Where an invitation e-mail's link lands. A signed-in person with the invited address accepts with one click;
// someone without an account creates one here (the address is the invited one, proven by having the link).
import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { AuthCard } from "~/components/auth/auth-card";
import { Button, Field, Input, Notice } from "~/components/ui";
import { NameSchema, PasswordSchema } from "~/lib/account-schemas";
import { fieldErrors, formObject } from "~/lib/form";
import { ROLE_DESCRIPTIONS } from "~/lib/roles";
import { acceptInvitation, findOpenInvitation } from "~/models/invitation.server";
import { createUser, EmailTakenError, getUserByEmail } from "~/models/user.server";
import { getActor } from "~/services/permissions.server";
import { startSession } from "~/services/session.server";
import type { Route } from "./+types/invitations.$token";
import { smallForm } from "~/services/body-limit.server";

export const meta: Route.MetaFunction = () => [{ title: "Invitation · Tracewell" }];

const ActionSchema = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("accept") }),
  z.object({ intent: z.literal("signup"), name: NameSchema, password: PasswordSchema }),
], { error: "Unknown action" });

const CLOSED = "This invitation is no longer valid: it was used, withdrawn or has expired. Ask the project's owner for a new one.";

export async function loader({ request, params }: Route.LoaderArgs) {
  const invitation = await findOpenInvitation(params.token);
  if (!invitation) return data({ state: "closed" as const }, { status: 404 });
  const actor = await getActor(request);
  const base = { project: invitation.project.name, role: invitation.role, invitedBy: invitation.invitedBy, email: invitation.email };
  if (actor.kind === "user") {
    if (actor.user.email !== invitation.email) return { state: "wrong-person" as const, ...base, signedInAs: actor.user.email };
    return { state: "accept" as const, ...base };
  }
  const hasAccount = Boolean(await getUserByEmail(invitation.email));
  return { state: hasAccount ? ("sign-in" as const) : ("sign-up" as const), ...base };
}

export async function action({ request, params }: Route.ActionArgs) {
  const raw = formObject(await smallForm(request));
  const parsed = ActionSchema.safeParse(raw);
  if (!parsed.success) return data({ errors: fieldErrors(parsed.error), name: raw.name ?? "" }, { status: 400 });
  const invitation = await findOpenInvitation(params.token);
  if (!invitation) return data({ errors: { form: CLOSED }, name: raw.name ?? "" }, { status: 404 });

  const actor = await getActor(request);
  if (parsed.data.intent === "accept") {
    if (actor.kind !== "user") return redirect(`/login?next=${encodeURIComponent(`/invitations/${params.token}`)}`);
    const result = await acceptInvitation(params.token, actor.user);
    if ("error" in result) {
      const message = result.error === "wrong-person" ? `This invitation was sent to ${invitation.email}. Sign in with that address to accept it.` : CLOSED;
      return data({ errors: { form: message }, name: "" }, { status: result.error === "closed" ? 404 : 403 });
    }
    return redirect(`/projects/${result.projectId}`);
  }

  // Creating an account through the invitation.
  if (actor.kind === "user") return data({ errors: { form: "You are already signed in. Sign out first to create another account." }, name: raw.name ?? "" }, { status: 400 });
  let user;
  try {
    user = await createUser({ email: invitation.email, name: parsed.data.name, password: parsed.data.password });
  } catch (e) {
    if (e instanceof EmailTakenError) return data({ errors: { form: "An account with this address exists already: sign in to accept." }, name: raw.name ?? "" }, { status: 409 });
    throw e;
  }
  const result = await acceptInvitation(params.token, user);
  const cookie = await startSession(request, user.id);
  if ("error" in result) return redirect("/projects", { headers: { "Set-Cookie": cookie } });
  return redirect(`/projects/${result.projectId}`, { headers: { "Set-Cookie": cookie } });
}

export default function InvitationPage({ loaderData, actionData, params }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const errors: Record<string, string | undefined> = actionData?.errors ?? {};
  if (loaderData.state === "closed") {
    return (
      <AuthCard title="Invitation">
        <Notice tone="warn">{CLOSED}</Notice>
      </AuthCard>
    );
  }
  const role = ROLE_DESCRIPTIONS[loaderData.role];
  const intro = (
    <>
      {loaderData.invitedBy ?? "A project owner"} invited <strong className="text-ink">{loaderData.email}</strong> to{" "}
      <strong className="text-ink">{loaderData.project}</strong> as <strong className="text-ink">{role.label.toLowerCase()}</strong>.
      <span className="mt-2 block text-xs">{role.summary}</span>
    </>
  );
  const next = encodeURIComponent(`/invitations/${params.token}`);
  return (
    <AuthCard title={`Join ${loaderData.project}`} intro={intro}>
      <div className="flex flex-col gap-4">
        {errors.form ? <Notice tone="danger">{errors.form}</Notice> : null}
        {loaderData.state === "accept" ? (
          <Form method="post">
            <input type="hidden" name="intent" value="accept" />
            <Button type="submit" tone="primary" disabled={busy} className="w-full">
              Accept and open the project
            </Button>
          </Form>
        ) : null}
        {loaderData.state === "wrong-person" ? (
          <>
            <Notice tone="warn">
              You are signed in as {loaderData.signedInAs}. This invitation is for {loaderData.email}: sign out, then open the link again.
            </Notice>
            <Form method="post" action="/logout">
              <Button type="submit" className="w-full">
                Sign out
              </Button>
            </Form>
          </>
        ) : null}
        {loaderData.state === "sign-in" ? (
          <Link to={`/login?next=${next}`} className="text-center text-accent underline">
            Sign in as {loaderData.email} to accept
          </Link>
        ) : null}
        {loaderData.state === "sign-up" ? (
          <Form method="post" className="flex flex-col gap-4" noValidate>
            <input type="hidden" name="intent" value="signup" />
            <p className="text-sm text-ink-muted">Create your Tracewell account to accept.</p>
            <Field label="E-mail">{(p) => <Input {...p} value={loaderData.email} readOnly />}</Field>
            <Field label="Your name" error={errors.name}>
              {(p) => <Input {...p} name="name" autoComplete="name" defaultValue={actionData?.name ?? ""} />}
            </Field>
            <Field label="Password" hint="At least 10 characters." error={errors.password}>
              {(p) => <Input {...p} name="password" type="password" autoComplete="new-password" />}
            </Field>
            <Button type="submit" tone="primary" disabled={busy}>
              Create account and join
            </Button>
          </Form>
        ) : null}
      </div>
    </AuthCard>
  );
}

// Where a reset e-mail's link lands: choose a new password. Using the link ends every session of the account
// (the person signs in again with the new password), and the link stops working.
import { data, Form, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { AuthCard } from "~/components/auth/auth-card";
import { Button, Field, Input, Notice } from "~/components/ui";
import { PasswordSchema } from "~/lib/account-schemas";
import { fieldErrors, formObject } from "~/lib/form";
import { logActivity } from "~/models/activity.server";
import { consumePasswordReset, findOpenReset } from "~/models/password-reset.server";
import { listProjectsForUser } from "~/models/project.server";
import { endSession } from "~/services/session.server";
import type { Route } from "./+types/reset-password.$token";
import { smallForm } from "~/services/body-limit.server";

export const meta: Route.MetaFunction = () => [{ title: "Choose a new password · Tracewell" }];

const Schema = z
  .object({ password: PasswordSchema, confirm: z.string({ error: "Repeat the password" }) })
  .refine((v) => v.password === v.confirm, { path: ["confirm"], message: "The two passwords differ" });

const CLOSED = "This reset link is no longer valid: it was used already or has expired. Ask for a new one.";

export async function loader({ params }: Route.LoaderArgs) {
  const open = await findOpenReset(params.token);
  if (!open) return data({ open: false as const }, { status: 404 });
  return { open: true as const, email: open.email };
}

export async function action({ request, params }: Route.ActionArgs) {
  const raw = formObject(await smallForm(request));
  const parsed = Schema.safeParse(raw);
  if (!parsed.success) return data({ errors: fieldErrors(parsed.error) }, { status: 400 });
  const userId = await consumePasswordReset(params.token, parsed.data.password);
  if (!userId) return data({ errors: { form: CLOSED } }, { status: 404 });
  for (const p of await listProjectsForUser(userId)) await logActivity(p.id, userId, "account.password_reset");
  // Every session was just ended, this browser's included; it signs in again with the new password.
  return redirect("/login?reset=done", { headers: { "Set-Cookie": await endSession(request) } });
}

export default function ResetPassword({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const errors: Record<string, string | undefined> = actionData?.errors ?? {};
  if (!loaderData.open) {
    return (
      <AuthCard title="Choose a new password">
        <Notice tone="warn">{CLOSED}</Notice>
      </AuthCard>
    );
  }
  return (
    <AuthCard title="Choose a new password" intro={<>For {loaderData.email}. You will be signed out everywhere else.</>}>
      <Form method="post" className="flex flex-col gap-4" noValidate>
        {errors.form ? <Notice tone="danger">{errors.form}</Notice> : null}
        <Field label="New password" hint="At least 10 characters." error={errors.password}>
          {(p) => <Input {...p} name="password" type="password" autoComplete="new-password" />}
        </Field>
        <Field label="Repeat it" error={errors.confirm}>
          {(p) => <Input {...p} name="confirm" type="password" autoComplete="new-password" />}
        </Field>
        <Button type="submit" tone="primary" disabled={busy}>
          Set password
        </Button>
      </Form>
    </AuthCard>
  );
}

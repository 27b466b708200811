// Asks for a reset link. The answer is the same whether or not the address has an account, so this page cannot
// be used to find out who uses Tracewell.
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import { AuthCard } from "~/components/auth/auth-card";
import { Button, Field, Input, Notice } from "~/components/ui";
import { EmailSchema } from "~/lib/account-schemas";
import { fieldErrors, formObject } from "~/lib/form";
import { createPasswordReset } from "~/models/password-reset.server";
import { getUserByEmail } from "~/models/user.server";
import { sendPasswordResetMail } from "~/services/account-mail.server";
import type { Route } from "./+types/forgot-password";
import { smallForm } from "~/services/body-limit.server";

export const meta: Route.MetaFunction = () => [{ title: "Reset your password · Tracewell" }];

const Schema = z.object({ email: EmailSchema });

export async function action({ request }: Route.ActionArgs) {
  const raw = formObject(await smallForm(request));
  const parsed = Schema.safeParse(raw);
  if (!parsed.success) return data({ sent: false as const, errors: fieldErrors(parsed.error), email: raw.email ?? "" }, { status: 400 });
  const user = await getUserByEmail(parsed.data.email);
  if (user) {
    const token = await createPasswordReset(user.id);
    if (token) {
      try {
        await sendPasswordResetMail({ to: user.email, name: user.name, token });
      } catch {
        return data({ sent: false as const, errors: { form: "The e-mail could not be sent just now. Try again in a moment." }, email: raw.email ?? "" }, { status: 502 });
      }
    }
  }
  return { sent: true as const, email: parsed.data.email };
}

export default function ForgotPassword({ actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const errors: Record<string, string | undefined> = actionData && !actionData.sent ? actionData.errors : {};
  return (
    <AuthCard
      title="Reset your password"
      intro="We e-mail you a link to choose a new one."
      footer={
        <Link to="/login" className="text-accent underline">
          Back to sign in
        </Link>
      }
    >
      {actionData?.sent ? (
        <Notice tone="ok">
          If {actionData.email} has a Tracewell account, a reset link is on its way. It works once, within the hour.
        </Notice>
      ) : (
        <Form method="post" className="flex flex-col gap-4" noValidate>
          {errors.form ? <Notice tone="danger">{errors.form}</Notice> : null}
          <Field label="E-mail" error={errors.email}>
            {(p) => <Input {...p} name="email" type="email" autoComplete="email" defaultValue={actionData?.email ?? ""} />}
          </Field>
          <Button type="submit" tone="primary" disabled={busy}>
            Send reset link
          </Button>
        </Form>
      )}
    </AuthCard>
  );
}

import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { AuthCard } from "~/components/auth/auth-card";
import { Button, Field, Input, Notice } from "~/components/ui";
import { EmailSchema, NameSchema, PasswordSchema } from "~/lib/account-schemas";
import { fieldErrors, formObject } from "~/lib/form";
import { safeNext } from "~/lib/safe-next";
import { createUser, EmailTakenError } from "~/models/user.server";
import { getActor } from "~/services/permissions.server";
import { startSession } from "~/services/session.server";
import type { Route } from "./+types/signup";
import { smallForm } from "~/services/body-limit.server";

export const meta: Route.MetaFunction = () => [{ title: "Create an account · Tracewell" }];


const SignUpSchema = z.object({ name: NameSchema, email: EmailSchema, password: PasswordSchema, next: z.string().optional() });

export async function loader({ request }: Route.LoaderArgs) {
  const next = safeNext(new URL(request.url).searchParams.get("next"));
  if ((await getActor(request)).kind === "user") throw redirect(next);
  return { next };
}

export async function action({ request }: Route.ActionArgs) {
  const raw = formObject(await smallForm(request));
  const parsed = SignUpSchema.safeParse(raw);
  const values = { name: raw.name ?? "", email: raw.email ?? "" };
  if (!parsed.success) return data({ errors: fieldErrors(parsed.error), values }, { status: 400 });
  let user;
  try {
    user = await createUser(parsed.data);
  } catch (e) {
    if (e instanceof EmailTakenError) {
      return data({ errors: { email: "An account with this e-mail already exists. Sign in instead, or reset the password." }, values }, { status: 409 });
    }
    throw e;
  }
  const cookie = await startSession(request, user.id);
  return redirect(safeNext(parsed.data.next), { headers: { "Set-Cookie": cookie } });
}

export default function SignUp({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const errors: Record<string, string | undefined> = actionData?.errors ?? {};
  return (
    <AuthCard
      title="Create an account"
      intro="Your own projects start empty; to join a team's project, open the invitation they e-mailed you."
      footer={
        <>
          Already have an account? <Link to={`/login?next=${encodeURIComponent(loaderData.next)}`} className="text-accent underline">Sign in</Link>
        </>
      }
    >
      <Form method="post" className="flex flex-col gap-4" noValidate>
        {errors.form ? <Notice tone="danger">{errors.form}</Notice> : null}
        <input type="hidden" name="next" value={loaderData.next} />
        <Field label="Name" error={errors.name}>
          {(p) => <Input {...p} name="name" autoComplete="name" defaultValue={actionData?.values.name ?? ""} required />}
        </Field>
        <Field label="E-mail" error={errors.email}>
          {(p) => <Input {...p} name="email" type="email" autoComplete="email" defaultValue={actionData?.values.email ?? ""} required />}
        </Field>
        <Field label="Password" hint="At least 10 characters. A short sentence is easy to remember." error={errors.password}>
          {(p) => <Input {...p} name="password" type="password" autoComplete="new-password" required />}
        </Field>
        <Button type="submit" tone="primary" disabled={busy}>
          {busy ? "Creating…" : "Create account"}
        </Button>
      </Form>
    </AuthCard>
  );
}

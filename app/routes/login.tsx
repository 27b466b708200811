import { data, Form, Link, redirect, useNavigation } from "react-router";
import { AuthCard } from "~/components/auth/auth-card";
import { Button, Field, Input, Notice } from "~/components/ui";
import { safeNext } from "~/lib/safe-next";
import { authenticator, SignInError, ThrottledError } from "~/services/auth.server";
import { getActor } from "~/services/permissions.server";
import { startSession } from "~/services/session.server";
import type { Route } from "./+types/login";
import { smallFormRequest } from "~/services/body-limit.server";

export const meta: Route.MetaFunction = () => [{ title: "Sign in · Tracewell" }];

export async function loader({ request }: Route.LoaderArgs) {
  const url = new URL(request.url);
  const next = safeNext(url.searchParams.get("next"));
  const actor = await getActor(request);
  if (actor.kind === "user") throw redirect(next);
  return { next, reset: url.searchParams.get("reset") === "done" };
}

export async function action({ request: incoming }: Route.ActionArgs) {
  const request = await smallFormRequest(incoming);
  // The strategy reads its own clone of the body; this clone is for the fields it does not care about.
  const form = await request.clone().formData();
  const email = String(form.get("email") ?? "").slice(0, 320);
  let user;
  try {
    user = await authenticator.authenticate("password", request);
  } catch (e) {
    if (e instanceof ThrottledError) {
      return data({ error: e.message, field: null, email }, { status: 429, headers: { "Retry-After": String(e.retryAfterSeconds) } });
    }
    if (e instanceof SignInError) return data({ error: e.message, field: e.field, email }, { status: e.field ? 400 : 401 });
    throw e;
  }
  const cookie = await startSession(request, user.id);
  return redirect(safeNext(form.get("next")), { headers: { "Set-Cookie": cookie } });
}

export default function Login({ loaderData, actionData }: Route.ComponentProps) {
  const busy = useNavigation().state === "submitting";
  const error = actionData?.error;
  return (
    <AuthCard
      title="Sign in"
      intro="Welcome back to the workbench."
      footer={
        <>
          New here? <Link to={`/signup?next=${encodeURIComponent(loaderData.next)}`} className="text-accent underline">Create an account</Link>
        </>
      }
    >
      <Form method="post" className="flex flex-col gap-4" noValidate>
        {loaderData.reset ? <Notice tone="ok">Your password was changed. Sign in with the new one.</Notice> : null}
        {error && !actionData?.field ? <Notice tone="danger">{error}</Notice> : null}
        <input type="hidden" name="next" value={loaderData.next} />
        <Field label="E-mail" error={actionData?.field === "email" ? error : undefined}>
          {(p) => <Input {...p} name="email" type="email" autoComplete="username" defaultValue={actionData?.email ?? ""} required />}
        </Field>
        <Field label="Password" error={actionData?.field === "password" ? error : undefined}>
          {(p) => <Input {...p} name="password" type="password" autoComplete="current-password" required />}
        </Field>
        <Button type="submit" tone="primary" disabled={busy}>
          {busy ? "Signing in…" : "Sign in"}
        </Button>
        <Link to="/forgot-password" className="text-center text-xs text-ink-muted underline hover:text-ink">
          Forgot your password?
        </Link>
      </Form>
    </AuthCard>
  );
}

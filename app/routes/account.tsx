// The signed-in person's own account: name, e-mail, password, where they are signed in, and API tokens.
// Every change that could lock someone out asks for the current password first.
import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import { Button, Field, Input, Notice, Panel, Select, Table, Td, Th, IntentButton } from "~/components/ui";
import { EmailSchema, NameSchema, PasswordSchema } from "~/lib/account-schemas";
import { fieldErrors, formObject } from "~/lib/form";
import { SCOPE_DESCRIPTIONS, TOKEN_SCOPES } from "~/lib/roles";
import { logActivity } from "~/models/activity.server";
import { listProjectsForUser } from "~/models/project.server";
import { listLiveSessions, revokeOtherSessions, revokeSession } from "~/models/session.server";
import { createToken, listTokens, revokeToken } from "~/models/token.server";
import { EmailTakenError, getUserById, setUserPassword, updateUserEmail, updateUserName } from "~/models/user.server";
import { verifyPassword } from "~/services/password.server";
import { requireUser } from "~/services/permissions.server";
import type { Route } from "./+types/account";
import { smallForm } from "~/services/body-limit.server";

export const meta: Route.MetaFunction = () => [{ title: "Account and tokens · Tracewell" }];

const EXPIRY_CHOICES = { never: null, "7": 7, "30": 30, "90": 90, "365": 365 } as const;
type ExpiryChoice = keyof typeof EXPIRY_CHOICES;

const AccountActionSchema = z.discriminatedUnion(
  "intent",
  [
    z.object({ intent: z.literal("name"), name: NameSchema }),
    z.object({ intent: z.literal("email"), email: EmailSchema, currentPassword: z.string().min(1, "Current password is required") }),
    z
      .object({
        intent: z.literal("password"),
        currentPassword: z.string().min(1, "Current password is required"),
        password: PasswordSchema,
        confirm: z.string(),
      })
      .refine((v) => v.password === v.confirm, { path: ["confirm"], message: "The two passwords differ" }),
    z.object({ intent: z.literal("revoke-session"), sessionId: z.uuid("Session is not valid") }),
    z.object({ intent: z.literal("revoke-other-sessions") }),
    z.object({
      intent: z.literal("create-token"),
      tokenName: z.string().trim().min(1, "Token name is required").max(80, "Token name must be at most 80 characters"),
      scope: z.enum(TOKEN_SCOPES, { error: "Scope must be read or render" }),
      expiry: z.enum(Object.keys(EXPIRY_CHOICES) as [ExpiryChoice, ...ExpiryChoice[]], { error: "Choose when the token expires" }),
    }),
    z.object({ intent: z.literal("revoke-token"), tokenId: z.uuid("Token is not valid") }),
  ],
  { error: "Unknown action" },
);

export async function loader({ request }: Route.LoaderArgs) {
  const actor = await requireUser(request);
  const [sessions, tokens] = await Promise.all([listLiveSessions(actor.user.id), listTokens(actor.user.id)]);
  return {
    user: actor.user,
    sessions: sessions.map((s) => ({
      id: s.id,
      current: s.id === actor.sessionId,
      userAgent: s.userAgent ?? "unknown browser",
      address: s.address ?? "",
      createdAt: s.createdAt.toISOString(),
      lastSeenAt: s.lastSeenAt.toISOString(),
    })),
    tokens: tokens.map((t) => ({
      id: t.id,
      name: t.name,
      scope: t.scope,
      prefix: t.prefix,
      createdAt: t.createdAt.toISOString(),
      lastUsedAt: t.lastUsedAt?.toISOString() ?? null,
      expiresAt: t.expiresAt?.toISOString() ?? null,
      expired: t.expiresAt ? t.expiresAt.getTime() <= Date.now() : false,
    })),
  };
}

type Result =
  | { ok: true; intent: string; message: string; newToken?: { value: string; name: string } }
  | { ok: false; intent: string; errors: Record<string, string> };

async function logForProjects(userId: string, kind: string, detail: Record<string, unknown>): Promise<void> {
  // Owners of every project this person is on see token and password events in that project's log.
  for (const p of await listProjectsForUser(userId)) await logActivity(p.id, userId, kind, detail);
}

export async function action({ request }: Route.ActionArgs) {
  const actor = await requireUser(request);
  const me = actor.user;
  const raw = formObject(await smallForm(request));
  const parsed = AccountActionSchema.safeParse(raw);
  const fail = (errors: Record<string, string>, status = 400) => data<Result>({ ok: false, intent: raw.intent ?? "", errors }, { status });
  if (!parsed.success) return fail(fieldErrors(parsed.error));
  const input = parsed.data;

  const checkPassword = async (password: string) => {
    const user = await getUserById(me.id);
    return Boolean(user && (await verifyPassword(user.passwordHash, password)));
  };

  switch (input.intent) {
    case "name":
      await updateUserName(me.id, input.name);
      return data<Result>({ ok: true, intent: input.intent, message: "Name saved." });
    case "email": {
      if (!(await checkPassword(input.currentPassword))) return fail({ currentPassword: "Current password is incorrect" }, 403);
      try {
        await updateUserEmail(me.id, input.email);
      } catch (e) {
        if (e instanceof EmailTakenError) return fail({ email: "Another account uses this e-mail" }, 409);
        throw e;
      }
      return data<Result>({ ok: true, intent: input.intent, message: "E-mail changed. Use the new address to sign in." });
    }
    case "password": {
      if (!(await checkPassword(input.currentPassword))) return fail({ currentPassword: "Current password is incorrect" }, 403);
      await setUserPassword(me.id, input.password);
      const ended = await revokeOtherSessions(me.id, actor.sessionId);
      await logForProjects(me.id, "account.password_changed", {});
      return data<Result>({ ok: true, intent: input.intent, message: `Password changed. Signed out of ${ended} other session${ended === 1 ? "" : "s"}.` });
    }
    case "revoke-session": {
      const done = await revokeSession(me.id, input.sessionId);
      if (!done) return fail({ form: "That session has ended already." });
      return data<Result>({ ok: true, intent: input.intent, message: input.sessionId === actor.sessionId ? "Signed out." : "Session ended." });
    }
    case "revoke-other-sessions": {
      const ended = await revokeOtherSessions(me.id, actor.sessionId);
      return data<Result>({ ok: true, intent: input.intent, message: `Signed out of ${ended} other session${ended === 1 ? "" : "s"}.` });
    }
    case "create-token": {
      const days = EXPIRY_CHOICES[input.expiry];
      const expiresAt = days === null ? null : new Date(Date.now() + days * 86_400_000);
      const { token, record } = await createToken({ userId: me.id, name: input.tokenName, scope: input.scope, expiresAt });
      await logForProjects(me.id, "token.created", { tokenId: record.id, name: record.name, scope: record.scope, expiresAt: expiresAt?.toISOString() ?? null });
      return data<Result>({ ok: true, intent: input.intent, message: "Token created.", newToken: { value: token, name: record.name } });
    }
    case "revoke-token": {
      const revoked = await revokeToken(me.id, input.tokenId);
      if (!revoked) return fail({ form: "That token was revoked already." });
      await logForProjects(me.id, "token.revoked", { tokenId: revoked.id, name: revoked.name, scope: revoked.scope });
      return data<Result>({ ok: true, intent: input.intent, message: `Token "${revoked.name}" revoked.` });
    }
  }
}

function when(iso: string | null): string {
  return iso ? new Date(iso).toLocaleString() : "never";
}

export default function Account({ loaderData, actionData }: Route.ComponentProps) {
  const { user, sessions, tokens } = loaderData;
  const busy = useNavigation().state === "submitting";
  const errorsFor = (intent: string): Record<string, string | undefined> => (actionData && !actionData.ok && actionData.intent === intent ? actionData.errors : {});
  const formError = actionData && !actionData.ok ? actionData.errors.form : undefined;
  return (
    <div className="mx-auto flex max-w-4xl flex-col gap-6 p-6">
      <h1 className="text-xl font-bold">Account and tokens</h1>
      {actionData?.ok && !actionData.newToken ? <Notice tone="ok">{actionData.message}</Notice> : null}
      {formError ? <Notice tone="danger">{formError}</Notice> : null}

      <div className="grid gap-6 md:grid-cols-2">
        <Panel title="Name">
          <Form method="post" className="flex flex-col gap-3" noValidate>
            <input type="hidden" name="intent" value="name" />
            <Field label="Name" error={errorsFor("name").name}>
              {(p) => <Input {...p} name="name" defaultValue={user.name} autoComplete="name" />}
            </Field>
            <div>
              <Button type="submit" disabled={busy}>
                Save name
              </Button>
            </div>
          </Form>
        </Panel>
        <Panel title="E-mail">
          <Form method="post" className="flex flex-col gap-3" noValidate>
            <input type="hidden" name="intent" value="email" />
            <Field label="E-mail" error={errorsFor("email").email}>
              {(p) => <Input {...p} name="email" type="email" defaultValue={user.email} autoComplete="email" />}
            </Field>
            <Field label="Current password" error={errorsFor("email").currentPassword}>
              {(p) => <Input {...p} name="currentPassword" type="password" autoComplete="current-password" />}
            </Field>
            <div>
              <Button type="submit" disabled={busy}>
                Change e-mail
              </Button>
            </div>
          </Form>
        </Panel>
      </div>

      <Panel title="Password">
        <Form method="post" className="grid gap-3 md:grid-cols-3" noValidate>
          <input type="hidden" name="intent" value="password" />
          <Field label="Current password" error={errorsFor("password").currentPassword}>
            {(p) => <Input {...p} name="currentPassword" type="password" autoComplete="current-password" />}
          </Field>
          <Field label="New password" hint="At least 10 characters." error={errorsFor("password").password}>
            {(p) => <Input {...p} name="password" type="password" autoComplete="new-password" />}
          </Field>
          <Field label="Repeat it" error={errorsFor("password").confirm}>
            {(p) => <Input {...p} name="confirm" type="password" autoComplete="new-password" />}
          </Field>
          <div className="md:col-span-3">
            <Button type="submit" disabled={busy}>
              Change password
            </Button>
            <span className="ml-3 text-xs text-ink-faint">Signs you out everywhere except here.</span>
          </div>
        </Form>
      </Panel>

      <Panel
        title="Where you are signed in"
        actions={
          sessions.length > 1 ? (
            <IntentButton intent="revoke-other-sessions" tone="danger" disabled={busy}>
              Sign out everywhere else
            </IntentButton>
          ) : null
        }
      >
        <Table>
          <thead>
            <tr>
              <Th>Browser</Th>
              <Th>Address</Th>
              <Th>Signed in</Th>
              <Th>Last seen</Th>
              <Th>
                <span className="sr-only">Actions</span>
              </Th>
            </tr>
          </thead>
          <tbody>
            {sessions.map((s) => (
              <tr key={s.id} data-testid="session-row">
                <Td className="max-w-64 truncate" title={s.userAgent}>
                  {s.userAgent}
                  {s.current ? <span className="ml-1 text-xs text-ok">(this browser)</span> : null}
                </Td>
                <Td className="text-ink-muted">{s.address}</Td>
                <Td className="text-ink-muted">{when(s.createdAt)}</Td>
                <Td className="text-ink-muted">{when(s.lastSeenAt)}</Td>
                <Td className="text-right">
                  <IntentButton intent="revoke-session" fields={{ sessionId: s.id }} tone="quiet" disabled={busy}>
                    {s.current ? "Sign out" : "End"}
                  </IntentButton>
                </Td>
              </tr>
            ))}
          </tbody>
        </Table>
      </Panel>

      <Panel title="API tokens">
        <p className="mb-4 text-sm text-ink-muted">
          Tokens let scripts and pipelines use the HTTP API as you, within their scope and never beyond your role in a project. A token never
          manages members or deletes anything. Send it as <code className="text-ink">Authorization: Bearer &lt;token&gt;</code>.
        </p>
        {actionData?.ok && actionData.newToken ? (
          <div className="mb-4 flex flex-col gap-2">
            <Notice tone="ok">Token "{actionData.newToken.name}" created. Copy it now: it is shown only this once and cannot be recovered.</Notice>
            <Input readOnly value={actionData.newToken.value} data-testid="new-token" aria-label="New token" onFocus={(e) => e.currentTarget.select()} className="font-mono" />
          </div>
        ) : null}
        <Form method="post" className="mb-5 flex flex-wrap items-end gap-3" noValidate>
          <input type="hidden" name="intent" value="create-token" />
          <div className="min-w-48 flex-1">
            <Field label="Name" error={errorsFor("create-token").tokenName}>
              {(p) => <Input {...p} name="tokenName" placeholder="nightly turntables" />}
            </Field>
          </div>
          <div className="w-48">
            <Field label="Scope" error={errorsFor("create-token").scope}>
              {(p) => (
                <Select {...p} name="scope" defaultValue="read">
                  <option value="read">Read</option>
                  <option value="render">Read and render</option>
                </Select>
              )}
            </Field>
          </div>
          <div className="w-36">
            <Field label="Expires" error={errorsFor("create-token").expiry}>
              {(p) => (
                <Select {...p} name="expiry" defaultValue="90">
                  <option value="7">in 7 days</option>
                  <option value="30">in 30 days</option>
                  <option value="90">in 90 days</option>
                  <option value="365">in a year</option>
                  <option value="never">never</option>
                </Select>
              )}
            </Field>
          </div>
          <Button type="submit" tone="primary" disabled={busy}>
            Create token
          </Button>
        </Form>
        <ul className="mb-4 text-xs text-ink-faint">
          {TOKEN_SCOPES.map((s) => (
            <li key={s}>{SCOPE_DESCRIPTIONS[s]}</li>
          ))}
        </ul>
        {tokens.length === 0 ? (
          <p className="text-sm text-ink-faint">No tokens.</p>
        ) : (
          <Table>
            <thead>
              <tr>
                <Th>Name</Th>
                <Th>Token</Th>
                <Th>Scope</Th>
                <Th>Created</Th>
                <Th>Last used</Th>
                <Th>Expires</Th>
                <Th>
                  <span className="sr-only">Actions</span>
                </Th>
              </tr>
            </thead>
            <tbody>
              {tokens.map((t) => (
                <tr key={t.id} data-testid="token-row">
                  <Td>{t.name}</Td>
                  <Td className="font-mono text-ink-muted">{t.prefix}…</Td>
                  <Td>{t.scope === "render" ? "read and render" : "read"}</Td>
                  <Td className="text-ink-muted">{when(t.createdAt)}</Td>
                  <Td className="text-ink-muted">{when(t.lastUsedAt)}</Td>
                  <Td className={t.expired ? "text-danger" : "text-ink-muted"}>{t.expiresAt ? `${t.expired ? "expired " : ""}${when(t.expiresAt)}` : "never"}</Td>
                  <Td className="text-right">
                    <IntentButton intent="revoke-token" fields={{ tokenId: t.id }} tone="danger" disabled={busy} aria-label={`Revoke ${t.name}`}>
                      Revoke
                    </IntentButton>
                  </Td>
                </tr>
              ))}
            </tbody>
          </Table>
        )}
      </Panel>
    </div>
  );
}

// Accounts end to end through the real request handler: sign-up and sessions, throttled sign-in, password reset
// and invitations by e-mail (read back from the SMTP fake), roles and the last-owner rule, API tokens.
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { activity, apiTokens, sessions, signInThrottles, users } from "~/db/schema";
import { getActor } from "~/services/permissions.server";
import { db, dbPool } from "~/services/db.server";
import { startApp, type AppServer } from "../support/app-server";
import { firstLink, readOutbox, waitForMail } from "../support/outbox";
import { pageText, Person, uniqueEmail } from "../support/person";

let app: AppServer;
const PASSWORD = "kettle-glaze-amber";

beforeAll(async () => {
  app = await startApp();
});
afterAll(async () => {
  await app?.close();
  await dbPool().end();
});

async function newAccount(label: string): Promise<{ person: Person; email: string; id: string }> {
  const person = new Person(app);
  const email = uniqueEmail(label);
  const res = await person.signUp({ name: `${label} tester`, email, password: PASSWORD });
  expect(res.status).toBe(302);
  const row = await db().query.users.findFirst({ where: eq(users.email, email) });
  return { person, email, id: row!.id };
}

async function createProject(owner: Person, name: string): Promise<string> {
  const res = await owner.post("/projects?index", { name, description: "" });
  expect(res.status).toBe(302);
  const id = /\/projects\/([0-9a-f-]{36})$/.exec(res.location ?? "")?.[1];
  expect(id).toBeTruthy();
  return id!;
}

/** Unlocks as if the wait had passed, without waiting on the clock. */
async function letLockExpire(email: string, address: string) {
  const past = new Date(Date.now() - 1000);
  await db().update(users).set({ lockedUntil: past }).where(eq(users.email, email));
  await db().update(signInThrottles).set({ lockedUntil: past }).where(eq(signInThrottles.key, `acct:${email}`));
  await db().update(signInThrottles).set({ lockedUntil: past }).where(eq(signInThrottles.key, `addr:${address}`));
}

describe("sign-up, sign-in and sessions", () => {
  it("signs up into a server-side session with an httpOnly SameSite=Lax cookie, rotated at each sign-in", async () => {
    const person = new Person(app);
    const email = uniqueEmail("maren");
    const res = await person.signUp({ name: "Maren", email, password: PASSWORD });
    expect(res.status).toBe(302);
    expect(res.location).toBe("/projects");
    const cookie = res.setCookie.find((c) => c.startsWith("tw_session="));
    expect(cookie).toMatch(/HttpOnly/i);
    expect(cookie).toMatch(/SameSite=Lax/i);
    expect(pageText((await person.get("/projects")).text)).toContain("Projects");
    const before = person.cookie;
    const user = await db().query.users.findFirst({ where: eq(users.email, email) });
    // Stored password is an argon2id hash, never the password.
    expect(user!.passwordHash).toMatch(/^\$argon2id\$/);
    expect(user!.passwordHash).not.toContain(PASSWORD);

    const again = await person.signIn(email, PASSWORD);
    expect(again.status).toBe(302);
    expect(person.cookie).not.toBe(before);
    const live = await db().select().from(sessions).where(eq(sessions.userId, user!.id));
    expect(live.filter((s) => !s.revokedAt)).toHaveLength(1); // the pre-sign-in session was ended
  });

  it("refuses bad input by field and keeps the typed values", async () => {
    const person = new Person(app);
    const res = await person.post("/signup", { name: "", email: "not-an-address", password: "short" });
    expect(res.status).toBe(400);
    const text = pageText(res.text);
    expect(text).toContain("Name is required");
    expect(text).toContain("E-mail is not a valid address");
    expect(text).toContain("Password must be at least 10 characters");
    expect(text).toContain('value="not-an-address"');
  });

  it("sends anonymous visitors of signed-in pages to sign in, and back afterwards", async () => {
    const { email } = await newAccount("returning");
    const stranger = new Person(app);
    const res = await stranger.get("/account");
    expect(res.status).toBe(302);
    expect(res.location).toBe("/login?next=%2Faccount");
    const signIn = await stranger.post("/login?next=%2Faccount", { email, password: PASSWORD, next: "/account" });
    expect(signIn.location).toBe("/account");
    // A crafted next pointing elsewhere is ignored.
    const evil = await new Person(app).post("/login", { email, password: PASSWORD, next: "//elsewhere.example/steal" });
    expect(evil.location).toBe("/projects");
  });

  it("signing out ends the server-side session, not only the cookie", async () => {
    const { person } = await newAccount("leaver");
    const stolen = person.cookie;
    await person.post("/logout", {});
    const replay = new Person(app);
    replay.cookie = stolen;
    expect((await replay.get("/projects")).location).toMatch(/^\/login/);
  });
});

describe("sign-in throttling", () => {
  it("slows an account down after 3 failures and locks it after 10, with a clear message, password or not", async () => {
    const { email } = await newAccount("locked");
    const attacker = new Person(app);
    for (let i = 0; i < 2; i++) {
      const r = await attacker.signIn(email, "wrong password!");
      expect(r.status).toBe(401);
      expect(pageText(r.text)).toContain("E-mail or password is incorrect.");
    }
    const third = await attacker.signIn(email, "wrong password!");
    expect(third.status).toBe(401);
    // Now a wait is imposed: even the right password is refused until it passes.
    const waiting = await attacker.signIn(email, PASSWORD);
    expect(waiting.status).toBe(429);
    expect(pageText(waiting.text)).toMatch(/Too many failed sign-ins for this account\. Wait \d+ seconds? and try again\./);
    for (let i = 4; i <= 10; i++) {
      await letLockExpire(email, attacker.address);
      expect((await attacker.signIn(email, "wrong password!")).status).toBe(401);
    }
    const locked = await attacker.signIn(email, PASSWORD);
    expect(locked.status).toBe(429);
    expect(pageText(locked.text)).toContain("This account is locked for 15 minutes after repeated failed sign-ins");
    // The owner, from another network, is locked out too (the lock is on the account) ...
    expect((await new Person(app).signIn(email, PASSWORD)).status).toBe(429);
    // ... until the lock passes; then the right password works and clears the count.
    await letLockExpire(email, attacker.address);
    expect((await new Person(app).signIn(email, PASSWORD)).status).toBe(302);
    const row = await db().query.users.findFirst({ where: eq(users.email, email) });
    expect(row!.failedSignIns).toBe(0);
  });

  it("treats an unknown address exactly like an existing account", async () => {
    const ghost = uniqueEmail("nobody");
    const attacker = new Person(app);
    for (let i = 0; i < 3; i++) expect((await attacker.signIn(ghost, "guess number one")).status).toBe(401);
    const r = await attacker.signIn(ghost, "guess number one");
    expect(r.status).toBe(429);
    expect(pageText(r.text)).toContain("Too many failed sign-ins for this account.");
  });

  it("slows down one network trying many accounts", async () => {
    const attacker = new Person(app);
    let last = await attacker.signIn(uniqueEmail("spray"), "guess number one");
    for (let i = 1; i < 15; i++) last = await attacker.signIn(uniqueEmail("spray"), "guess number one");
    expect(last.status).toBe(401);
    const next = await attacker.signIn(uniqueEmail("spray"), "guess number one");
    expect(next.status).toBe(429);
    expect(pageText(next.text)).toContain("Too many failed sign-ins from your network.");
    // Someone else on another network is unaffected.
    const { email } = await newAccount("bystander");
    expect((await new Person(app).signIn(email, PASSWORD)).status).toBe(302);
  });
});

describe("password reset by e-mail", () => {
  it("e-mails a single-use link that sets the password and ends every session", async () => {
    const { person: laptop, email } = await newAccount("forgetful");
    const phone = new Person(app);
    expect((await phone.signIn(email, PASSWORD)).status).toBe(302);

    const stranger = new Person(app);
    const asked = await stranger.post("/forgot-password", { email });
    expect(asked.status).toBe(200);
    expect(pageText(asked.text)).toContain("a reset link is on its way");
    const mail = await waitForMail(email, /Reset your Tracewell password/);
    const link = firstLink(mail, "/reset-password/");
    const path = new URL(link).pathname;
    const token = path.split("/").pop()!;
    // Only a hash of the token is stored.
    const stored = await db().query.passwordResets.findMany();
    expect(stored.some((r) => r.tokenHash === token)).toBe(false);

    expect((await stranger.get(path)).status).toBe(200);
    const mismatch = await stranger.post(path, { password: "new password one", confirm: "new password two" });
    expect(mismatch.status).toBe(400);
    expect(pageText(mismatch.text)).toContain("The two passwords differ");
    const done = await stranger.post(path, { password: "new password one", confirm: "new password one" });
    expect(done.status).toBe(302);
    expect(done.location).toBe("/login?reset=done");

    // Both earlier sessions are over.
    expect((await laptop.get("/projects")).location).toMatch(/^\/login/);
    expect((await phone.get("/projects")).location).toMatch(/^\/login/);
    // The link is spent.
    expect((await stranger.get(path)).status).toBe(404);
    expect((await stranger.post(path, { password: "another password", confirm: "another password" })).status).toBe(404);
    // Old password no longer works; the new one does.
    expect((await new Person(app).signIn(email, PASSWORD)).status).toBe(401);
    expect((await new Person(app).signIn(email, "new password one")).status).toBe(302);
  });

  it("answers the same for an unknown address and sends nothing", async () => {
    const ghost = uniqueEmail("ghost");
    const res = await new Person(app).post("/forgot-password", { email: ghost });
    expect(res.status).toBe(200);
    expect(pageText(res.text)).toContain("a reset link is on its way");
    await new Promise((r) => setTimeout(r, 500));
    expect((await readOutbox()).some((m) => m.to.includes(ghost))).toBe(false);
  });

  it("refuses an expired link", async () => {
    const { email } = await newAccount("slow");
    await new Person(app).post("/forgot-password", { email });
    const path = new URL(firstLink(await waitForMail(email, /Reset your Tracewell password/), "/reset-password/")).pathname;
    const user = await db().query.users.findFirst({ where: eq(users.email, email) });
    const { passwordResets } = await import("~/db/schema");
    await db().update(passwordResets).set({ expiresAt: new Date(Date.now() - 1000) }).where(eq(passwordResets.userId, user!.id));
    expect((await new Person(app).get(path)).status).toBe(404);
  });
});

describe("projects, invitations and roles", () => {
  it("invites an unknown address by e-mail; the link signs them up and they join with the invited role", async () => {
    const { person: owner, id: ownerId } = await newAccount("owner");
    const projectId = await createProject(owner, "Wren kettle packshots");
    const inviteeEmail = uniqueEmail("tobias");
    const sent = await owner.post(`/projects/${projectId}/members`, { intent: "invite", email: inviteeEmail, role: "editor" });
    expect(sent.status).toBe(200);
    expect(pageText(sent.text)).toContain(`Invitation sent to ${inviteeEmail}.`);

    const mail = await waitForMail(inviteeEmail, /invited you to "Wren kettle packshots"/);
    expect(mail.text).toContain("as editor");
    const path = new URL(firstLink(mail, "/invitations/")).pathname;

    const invitee = new Person(app);
    const page = pageText((await invitee.get(path)).text);
    expect(page).toContain("Create your Tracewell account to accept.");
    const bad = await invitee.post(path, { intent: "signup", name: "", password: "short" });
    expect(bad.status).toBe(400);
    expect(pageText(bad.text)).toContain("Name is required");
    const joined = await invitee.post(path, { intent: "signup", name: "Tobias", password: PASSWORD });
    expect(joined.status).toBe(302);
    expect(joined.location).toBe(`/projects/${projectId}`);
    const projectPage = pageText((await invitee.get(`/projects/${projectId}`)).text);
    expect(projectPage).toContain("Wren kettle packshots");
    expect(projectPage).toMatch(/data-testid="role-badge"[^>]*>Editor</);

    // The link is spent; the log shows both events to the owner.
    expect((await new Person(app).get(path)).status).toBe(404);
    const log = await db().select().from(activity).where(eq(activity.projectId, projectId));
    expect(log.map((e) => e.kind)).toEqual(expect.arrayContaining(["project.created", "member.invited", "member.joined"]));
    expect(log.find((e) => e.kind === "member.invited")?.actorId).toBe(ownerId);
    const activityPage = await owner.get(`/projects/${projectId}/activity`);
    expect(pageText(activityPage.text)).toContain(`invited ${inviteeEmail} as editor`);
    // Editors do not see the activity log: for them it does not exist.
    expect((await invitee.get(`/projects/${projectId}/activity`)).status).toBe(404);
  });

  it("an existing account signs in through the link; someone else signed in cannot use it", async () => {
    const { person: owner } = await newAccount("owner");
    const projectId = await createProject(owner, "Osier lamp launch");
    const { person: ines, email: inesEmail } = await newAccount("ines");
    const { person: other } = await newAccount("other");
    await owner.post(`/projects/${projectId}/members`, { intent: "invite", email: inesEmail, role: "viewer" });
    const path = new URL(firstLink(await waitForMail(inesEmail, /Osier lamp launch/), "/invitations/")).pathname;

    expect(pageText((await new Person(app).get(path)).text)).toContain(`Sign in as ${inesEmail} to accept`);
    expect(pageText((await other.get(path)).text)).toContain(`This invitation is for ${inesEmail}`);
    const wrong = await other.post(path, { intent: "accept" });
    expect(wrong.status).toBe(403);
    expect((await other.get(`/projects/${projectId}`)).status).toBe(404);

    const accepted = await ines.post(path, { intent: "accept" });
    expect(accepted.location).toBe(`/projects/${projectId}`);
    expect(pageText((await ines.get(`/projects/${projectId}`)).text)).toMatch(/role-badge"[^>]*>Viewer</);
    // Viewers may not invite, and their refusal is the same as for a project that does not exist.
    const refused = await ines.post(`/projects/${projectId}/members`, { intent: "invite", email: uniqueEmail("x"), role: "owner" });
    expect(refused.status).toBe(404);
  });

  it("keeps a last owner, lets others leave, and lets owners change roles and remove people", async () => {
    const { person: owner, id: ownerId } = await newAccount("owner");
    const projectId = await createProject(owner, "Carafe refraction tests");
    const { person: editor, id: editorId, email: editorEmail } = await newAccount("editor");
    await owner.post(`/projects/${projectId}/members`, { intent: "invite", email: editorEmail, role: "editor" });
    const path = new URL(firstLink(await waitForMail(editorEmail, /Carafe refraction tests/), "/invitations/")).pathname;
    await editor.post(path, { intent: "accept" });

    const leave = await owner.post(`/projects/${projectId}/members`, { intent: "leave" });
    expect(leave.status).toBe(409);
    expect(pageText(leave.text)).toContain("A project always keeps at least one owner");
    const demote = await owner.post(`/projects/${projectId}/members`, { intent: "change-role", userId: ownerId, role: "editor" });
    expect(demote.status).toBe(409);
    const badRole = await owner.post(`/projects/${projectId}/members`, { intent: "change-role", userId: editorId, role: "boss" });
    expect(badRole.status).toBe(400);
    expect(pageText(badRole.text)).toContain("Role must be owner, editor or viewer");
    // Editors cannot change roles.
    expect((await editor.post(`/projects/${projectId}/members`, { intent: "change-role", userId: editorId, role: "owner" })).status).toBe(404);

    expect((await owner.post(`/projects/${projectId}/members`, { intent: "change-role", userId: editorId, role: "owner" })).status).toBe(200);
    // With two owners, the first may now step down and leave.
    expect((await owner.post(`/projects/${projectId}/members`, { intent: "leave" })).location).toBe("/projects");
    expect((await owner.get(`/projects/${projectId}`)).status).toBe(404);
    // The remaining owner is the last one again.
    expect((await editor.post(`/projects/${projectId}/members`, { intent: "leave" })).status).toBe(409);
    const kinds = (await db().select().from(activity).where(eq(activity.projectId, projectId))).map((e) => e.kind);
    expect(kinds).toEqual(expect.arrayContaining(["member.role_changed", "member.left"]));
  });

  it("only an owner deletes a project, and only after typing its name", async () => {
    const { person: owner } = await newAccount("owner");
    const projectId = await createProject(owner, "Lamp shade drafts");
    const { person: editor, email: editorEmail } = await newAccount("editor");
    await owner.post(`/projects/${projectId}/members`, { intent: "invite", email: editorEmail, role: "editor" });
    await editor.post(new URL(firstLink(await waitForMail(editorEmail, /Lamp shade drafts/), "/invitations/")).pathname, { intent: "accept" });
    expect((await editor.post(`/projects/${projectId}/members`, { intent: "delete-project", confirmName: "Lamp shade drafts" })).status).toBe(404);
    const typo = await owner.post(`/projects/${projectId}/members`, { intent: "delete-project", confirmName: "Lamp shade draft" });
    expect(typo.status).toBe(400);
    expect(pageText(typo.text)).toContain("The name does not match; nothing was deleted.");
    expect((await owner.post(`/projects/${projectId}/members`, { intent: "delete-project", confirmName: "Lamp shade drafts" })).location).toBe("/projects");
    expect((await owner.get(`/projects/${projectId}`)).status).toBe(404);
    expect((await editor.get(`/projects/${projectId}`)).status).toBe(404);
  });

  it("validates a new project's name by field", async () => {
    const { person } = await newAccount("maker");
    const res = await person.post("/projects?index", { name: "  ", description: "" });
    expect(res.status).toBe(400);
    expect(pageText(res.text)).toContain("Name is required");
  });
});

describe("API tokens", () => {
  it("shows a token once, stores only its hash, tracks last use, and stops working when revoked", async () => {
    const { person, id } = await newAccount("pipeline");
    const projectId = await createProject(person, "Turntable pipeline");
    const created = await person.post("/account", { intent: "create-token", tokenName: "nightly turntables", scope: "render", expiry: "30" });
    expect(created.status).toBe(200);
    const token = /value="(tw_[A-Za-z0-9_-]{43})"/.exec(created.text)?.[1];
    expect(token).toBeTruthy();
    const [row] = await db().select().from(apiTokens).where(eq(apiTokens.userId, id));
    expect(row.tokenHash).not.toContain(token!);
    expect(row.prefix).toBe(token!.slice(0, 10));
    expect(row.lastUsedAt).toBeNull();
    // The listing shows the prefix only.
    const listing = await person.get("/account");
    expect(pageText(listing.text)).toContain(`${row.prefix}…`);
    expect(listing.text).not.toContain(token!);

    const withToken = new Request("http://localhost/api/v1/projects", { headers: { authorization: `Bearer ${token}` } });
    const actor = await getActor(withToken);
    expect(actor).toMatchObject({ kind: "token", scope: "render", tokenId: row.id });
    const after = await db().query.apiTokens.findFirst({ where: eq(apiTokens.id, row.id) });
    expect(after!.lastUsedAt).not.toBeNull();
    // A token reads the project page but never manages it.
    expect((await new Person(app).get(`/projects/${projectId}`, { authorization: `Bearer ${token!}` })).status).toBe(200);
    expect((await new Person(app).get(`/projects/${projectId}/activity`, { authorization: `Bearer ${token!}` })).status).toBe(404);

    const revoked = await person.post("/account", { intent: "revoke-token", tokenId: row.id });
    expect(pageText(revoked.text)).toContain('Token "nightly turntables" revoked.');
    const again = new Request("http://localhost/api/v1/projects", { headers: { authorization: `Bearer ${token}` } });
    expect((await getActor(again)).kind).toBe("anonymous");
    const log = (await db().select().from(activity).where(eq(activity.projectId, projectId))).map((e) => e.kind);
    expect(log).toEqual(expect.arrayContaining(["token.created", "token.revoked"]));
  });

  it("refuses an expired token and a malformed one", async () => {
    const { person, id } = await newAccount("expiring");
    const created = await person.post("/account", { intent: "create-token", tokenName: "short-lived", scope: "read", expiry: "7" });
    const token = /value="(tw_[A-Za-z0-9_-]{43})"/.exec(created.text)![1];
    await db().update(apiTokens).set({ expiresAt: new Date(Date.now() - 1000) }).where(eq(apiTokens.userId, id));
    const expired = new Request("http://localhost/api/v1/projects", { headers: { authorization: `Bearer ${token}` } });
    expect((await getActor(expired)).kind).toBe("anonymous");
    const junk = new Request("http://localhost/api/v1/projects", { headers: { authorization: "Bearer tw_nope" } });
    expect((await getActor(junk)).kind).toBe("anonymous");
    const bad = await person.post("/account", { intent: "create-token", tokenName: "", scope: "admin", expiry: "7" });
    expect(bad.status).toBe(400);
    expect(pageText(bad.text)).toContain("Token name is required");
  });
});

describe("account page", () => {
  it("changing the password needs the current one and ends the other sessions", async () => {
    const { person: laptop, email } = await newAccount("careful");
    const phone = new Person(app);
    await phone.signIn(email, PASSWORD);
    const page = await laptop.get("/account");
    expect((page.text.match(/data-testid="session-row"/g) ?? []).length).toBe(2);
    const wrong = await laptop.post("/account", { intent: "password", currentPassword: "not it at all", password: "fresh password 1", confirm: "fresh password 1" });
    expect(wrong.status).toBe(403);
    expect(pageText(wrong.text)).toContain("Current password is incorrect");
    const ok = await laptop.post("/account", { intent: "password", currentPassword: PASSWORD, password: "fresh password 1", confirm: "fresh password 1" });
    expect(pageText(ok.text)).toContain("Signed out of 1 other session.");
    expect((await phone.get("/projects")).location).toMatch(/^\/login/);
    expect((await laptop.get("/projects")).status).toBe(200);
  });

  it("changes name and e-mail; an e-mail in use is refused by field", async () => {
    const { person, email } = await newAccount("renamer");
    const { email: taken } = await newAccount("taken");
    expect(pageText((await person.post("/account", { intent: "name", name: "Ines Calder" })).text)).toContain("Name saved.");
    const clash = await person.post("/account", { intent: "email", email: taken, currentPassword: PASSWORD });
    expect(clash.status).toBe(409);
    expect(pageText(clash.text)).toContain("Another account uses this e-mail");
    const moved = uniqueEmail("moved");
    expect((await person.post("/account", { intent: "email", email: moved.toUpperCase(), currentPassword: PASSWORD })).status).toBe(200);
    expect((await new Person(app).signIn(moved, PASSWORD)).status).toBe(302);
    expect((await new Person(app).signIn(email, PASSWORD)).status).toBe(401);
  });
});

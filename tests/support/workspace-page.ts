// Shared setup of the scene workspace's browser tests: people with a password, a project holding one scene
// with its members, signing in, opening the workspace until Monaco is up, and reading the preview (samples
// done, the canvas's brightness once the picture on screen shows the latest look).
import { randomUUID } from "node:crypto";
import { eq } from "drizzle-orm";
import type { Page } from "playwright-core";
import { expect } from "vitest";
import { memberships, projects, users } from "~/db/schema";
import { createScene } from "~/models/scene.server";
import { db } from "~/services/db.server";
import { hashPassword } from "~/services/password.server";
import { gotoHydrated, newPerson } from "./browser";

export type Person = Awaited<ReturnType<typeof newPerson>>;
export type Account = { id: string; email: string; name: string; password: string };
export type Role = "owner" | "editor" | "viewer";

/** A person who can sign in; `label` shows in the e-mail so a failing run's rows are easy to find. */
export async function makeUser(label: string, password: string): Promise<Account> {
  const tag = randomUUID().slice(0, 8);
  const email = `${label}-${tag}@example.test`;
  const [u] = await db().insert(users).values({ email, name: `${label} ${tag}`, passwordHash: await hashPassword(password) }).returning();
  return { id: u!.id, email, name: u!.name, password };
}

export async function signIn(p: Person, account: Pick<Account, "email" | "password">): Promise<void> {
  await gotoHydrated(p.page, "/login?next=/projects");
  await p.page.getByLabel("E-mail").fill(account.email);
  await p.page.getByLabel("Password").fill(account.password);
  await p.page.getByRole("button", { name: "Sign in" }).click();
  await p.page.waitForURL((u) => u.pathname === "/projects", { timeout: 60_000 });
}

/** A fresh browser context (own cookies) signed in as `account`. */
export async function signedIn(account: Pick<Account, "email" | "password">): Promise<Person> {
  const p = await newPerson();
  await signIn(p, account);
  return p;
}

/**
 * A new project named `name` (the first member creates it) with `members` in their roles and one scene
 * saved as its first version. Returns the workspace path of the scene.
 */
export async function projectWithScene(opts: {
  name: string;
  members: { account: Account; role: Role }[];
  sceneName: string;
  scene: unknown;
  message: string;
}): Promise<{ projectId: string; sceneId: string; path: string }> {
  const creator = opts.members[0]!.account;
  const [project] = await db().insert(projects).values({ name: `${opts.name} ${randomUUID().slice(0, 6)}`, createdBy: creator.id }).returning();
  const projectId = project!.id;
  await db().insert(memberships).values(opts.members.map((m) => ({ projectId, userId: m.account.id, role: m.role })));
  const created = await createScene({ projectId, name: opts.sceneName, scene: opts.scene, authorId: creator.id, message: opts.message });
  if (!created.ok) throw new Error(JSON.stringify(created.issues));
  return { projectId, sceneId: created.scene.id, path: `/projects/${projectId}/scenes/${created.scene.id}` };
}

/** Removes a test's project with everything in it (scenes, versions, renders cascade). */
export async function dropProject(projectId: string | undefined): Promise<void> {
  if (projectId) await db().delete(projects).where(eq(projects.id, projectId));
}

/** Opens a workspace page and waits for hydration and the JSON editor. */
export async function openWorkspace(page: Page, path: string): Promise<void> {
  await gotoHydrated(page, path);
  await page.waitForSelector("[data-testid=scene-editor] .monaco-editor", { timeout: 60_000 });
}

export async function sppDone(page: Page): Promise<number> {
  return Number(await page.getByTestId("spp-done").innerText());
}

/** Waits until the preview has accumulated at least `spp` samples per pixel. */
export async function waitForSpp(page: Page, spp: number, timeout = 120_000): Promise<void> {
  await expect.poll(() => sppDone(page), { timeout, interval: 250 }).toBeGreaterThanOrEqual(spp);
}

/** The text of the JSON editor's visible lines (Monaco renders only what is on screen). */
export async function editorText(page: Page): Promise<string> {
  return (await page.locator("[data-testid=scene-editor] .view-lines").innerText()).replace(/\u00a0/g, " ");
}

/** Mean of the canvas's RGB bytes: a summary of the picture's brightness. */
export async function canvasMean(page: Page): Promise<number> {
  return page.evaluate(() => {
    const c = document.querySelector<HTMLCanvasElement>("[data-testid=preview] canvas")!;
    const d = c.getContext("2d")!.getImageData(0, 0, c.width, c.height).data;
    let s = 0;
    for (let i = 0; i < d.length; i += 4) s += d[i]! + d[i + 1]! + d[i + 2]!;
    return s / ((d.length / 4) * 3);
  });
}

/** canvasMean, read once the picture on screen answers the latest look sent to the worker. */
export async function shownMean(page: Page): Promise<number> {
  const preview = page.getByTestId("preview");
  await expect.poll(async () => (await preview.getAttribute("data-look-shown")) === (await preview.getAttribute("data-look-requested")), { timeout: 30_000 }).toBe(true);
  return canvasMean(page);
}

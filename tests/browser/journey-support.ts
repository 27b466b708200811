// Shared by the journey tests: people with real passwords (one browser each), small scenes of our own made
// quickly in the database, and the workspace's progress readings.
import { randomUUID } from "node:crypto";
import type { Page } from "playwright-core";
import { memberships, projects, users } from "~/db/schema";
import { db } from "~/services/db.server";
import { hashPassword } from "~/services/password.server";
import { gotoHydrated, newPerson } from "../support/browser";

export const JOURNEY_PASSWORD = "harrow-lane-journey-7";
export type Browser = Awaited<ReturnType<typeof newPerson>>;

export async function journeyUser(label: string): Promise<{ id: string; email: string; name: string }> {
  const tag = randomUUID().slice(0, 8);
  const email = `${label}-${tag}@harrowlane.example`;
  const [u] = await db().insert(users).values({ email, name: `${label} ${tag}`, passwordHash: await hashPassword(JOURNEY_PASSWORD) }).returning();
  return { id: u!.id, email, name: u!.name };
}

export async function journeyProject(name: string, members: { id: string; role: "owner" | "editor" | "viewer" }[]): Promise<string> {
  const owner = members.find((m) => m.role === "owner")!;
  const [p] = await db().insert(projects).values({ name: `${name} ${randomUUID().slice(0, 6)}`, createdBy: owner.id }).returning();
  await db().insert(memberships).values(members.map((m) => ({ projectId: p!.id, userId: m.id, role: m.role })));
  return p!.id;
}

export async function signIn(b: Browser, email: string, password = JOURNEY_PASSWORD): Promise<void> {
  await gotoHydrated(b.page, "/login?next=/projects");
  await b.page.getByLabel("E-mail").fill(email);
  await b.page.getByLabel("Password").fill(password);
  await b.page.getByRole("button", { name: "Sign in" }).click();
  await b.page.waitForURL((u) => u.pathname === "/projects", { timeout: 60_000 });
}

export async function openWorkspace(page: Page, path: string): Promise<void> {
  await gotoHydrated(page, path);
  await page.waitForSelector("[data-testid=scene-editor] .monaco-editor", { timeout: 60_000 });
}

export async function sppDone(page: Page): Promise<number> {
  return Number(await page.getByTestId("spp-done").innerText());
}

/** The desk corner of the Osier lamp launch: small enough to converge in a few seconds in the browser. */
export function lampCorner(o: { width?: number; height?: number; spp?: number } = {}) {
  return {
    format: "tracewell.scene/1",
    name: "Osier lamp, desk corner blocking",
    image: { width: o.width ?? 48, height: o.height ?? 32 },
    camera: { position: [0.9, 0.7, 1.2], target: [0, 0.25, 0], fovY: 42 },
    render: { spp: o.spp ?? 16, seed: 11, maxDepth: 4 },
    display: { exposure: 0, toneMap: "reinhard" },
    materials: {
      walnut: { type: "diffuse", albedo: [0.3, 0.18, 0.1] },
      shade: { type: "metal", reflectance: [0.75, 0.74, 0.72], roughness: 0.35 },
      plaster: { type: "diffuse", albedo: [0.7, 0.68, 0.64] },
    },
    objects: [
      { id: "desk", shape: { type: "box", min: [-0.8, 0, -0.4], max: [0.8, 0.04, 0.4] }, material: "walnut" },
      { id: "shade", shape: { type: "sphere", center: [-0.05, 0.45, -0.2], radius: 0.08 }, material: "shade" },
      { id: "wall", shape: { type: "rect", center: [0, 1, -0.45], u: [4, 0, 0], v: [0, 2, 0] }, material: "plaster" },
    ],
    lights: [
      { id: "bulb", type: "area", shape: { type: "sphere", center: [-0.05, 0.33, -0.2], radius: 0.03 }, power: 40, group: "lamp" },
      { id: "window", type: "area", shape: { type: "rect", center: [1.2, 1.0, 0.3], u: [0, 0, 0.8], v: [0, 0.8, 0] }, radiance: [1.5, 1.6, 1.8], group: "window" },
    ],
  };
}

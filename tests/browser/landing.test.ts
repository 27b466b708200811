import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { BASE_URL, gotoHydrated, isLocal, newPerson, screenshot } from "../support/browser";

describe("landing page", () => {
  let person: Awaited<ReturnType<typeof newPerson>>;
  beforeAll(async () => {
    person = await newPerson();
  });
  afterAll(async () => person.close());

  it("loads with our font and makes no request beyond localhost", async () => {
    const { page, requests } = person;
    await gotoHydrated(page, "/");
    await expect(page.getByRole("heading", { level: 1 }).textContent()).resolves.toMatch(/workbench for lighting/);
    await page.evaluate(() => document.fonts.ready);
    const family = await page.evaluate(() => getComputedStyle(document.querySelector("h1")!).fontFamily);
    expect(family).toMatch(/^"?Space Grotesk/);
    const loaded = await page.evaluate(() => document.fonts.check('16px "Space Grotesk"'));
    expect(loaded).toBe(true);
    expect(requests.some((r) => /space-grotesk.*\.woff2/.test(r))).toBe(true);
    expect(requests.filter((r) => !isLocal(r))).toEqual([]);
    expect(requests.every((r) => isLocal(r) && (r.startsWith(BASE_URL) || r.startsWith("data:") || r.startsWith("blob:")))).toBe(true);
    await screenshot(page, "landing");
  });

  it("reports service health as JSON", async () => {
    const res = await fetch(new URL("/healthz", BASE_URL));
    expect(res.status).toBe(200);
    expect(await res.json()).toMatchObject({ status: "ok", database: "reachable", objectStore: "reachable", mail: "reachable" });
  });
});

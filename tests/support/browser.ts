// Launches Debian's Chromium through playwright-core with the flags this machine needs, and records every
// request a page makes so tests can assert that nothing left localhost.
import { mkdtempSync } from "node:fs";
import { mkdir } from "node:fs/promises";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { type BrowserContext, chromium, type Page } from "playwright-core";

export const BASE_URL = process.env.TRACEWELL_URL ?? "http://localhost:3100";

export async function launchBrowser(): Promise<BrowserContext> {
  return chromium.launchPersistentContext(mkdtempSync(join(tmpdir(), "tracewell-chromium-")), {
    executablePath: process.env.CHROMIUM_PATH ?? "/usr/bin/chromium",
    headless: true,
    viewport: { width: 1440, height: 900 },
    args: [
      "--headless",
      "--no-sandbox",
      "--disable-gpu",
      "--disable-quic",
      "--no-first-run",
      "--disable-background-networking",
      "--disable-component-update",
      "--disable-sync",
    ],
  });
}

/** Opens a new isolated context (separate cookies) — one per simulated person. */
export async function newPerson(): Promise<{ context: BrowserContext; page: Page; requests: string[]; close: () => Promise<void> }> {
  const context = await launchBrowser();
  const page = context.pages()[0] ?? (await context.newPage());
  const requests: string[] = [];
  context.on("request", (r) => requests.push(r.url()));
  page.on("pageerror", (e) => console.error("page error:", e.message));
  return { context, page, requests, close: () => context.close() };
}

export async function gotoHydrated(page: Page, path: string): Promise<void> {
  await page.goto(new URL(path, BASE_URL).toString());
  await page.waitForSelector("html[data-hydrated=true]", { timeout: 30_000 });
}

export async function screenshot(page: Page, name: string): Promise<void> {
  const dir = process.env.SCREENSHOT_DIR ?? ".data/screenshots";
  await mkdir(dir, { recursive: true });
  await page.screenshot({ path: join(dir, `${name}.png`), fullPage: false });
}

export function isLocal(url: string): boolean {
  if (url.startsWith("data:") || url.startsWith("blob:")) return true;
  const host = new URL(url).hostname;
  return host === "localhost" || host === "127.0.0.1" || host === "[::1]";
}

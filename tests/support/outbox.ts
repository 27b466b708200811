// Reads e-mails captured by the local SMTP fake (MAIL_OUTBOX_DIR), for tests that follow links in them.
import { readdir, readFile } from "node:fs/promises";
import { join } from "node:path";

export type CapturedMail = { id: string; to: string; subject: string; text: string; html: string };

export async function readOutbox(): Promise<CapturedMail[]> {
  const dir = process.env.MAIL_OUTBOX_DIR;
  if (!dir) throw new Error("MAIL_OUTBOX_DIR is not set: run tests through bin/test or bin/with-test-env");
  const names = (await readdir(dir).catch(() => [] as string[])).filter((n) => n.endsWith(".json")).sort();
  return Promise.all(names.map(async (n) => JSON.parse(await readFile(join(dir, n), "utf8")) as CapturedMail));
}

/** Waits until a message to `to` whose subject matches arrives, and returns the newest such message. */
export async function waitForMail(to: string, subject: RegExp, timeoutMs = 15_000): Promise<CapturedMail> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const found = (await readOutbox()).filter((m) => m.to.toLowerCase().includes(to.toLowerCase()) && subject.test(m.subject));
    if (found.length) return found[found.length - 1];
    if (Date.now() > deadline) throw new Error(`no mail to ${to} matching ${subject} within ${timeoutMs} ms`);
    await new Promise((r) => setTimeout(r, 150));
  }
}

export function firstLink(mail: CapturedMail, pathPart: string): string {
  const links = mail.text.match(/https?:\/\/[^\s<>"]+/g) ?? [];
  const link = links.find((l) => l.includes(pathPart));
  if (!link) throw new Error(`no link containing ${pathPart} in mail "${mail.subject}"`);
  return link;
}

// Reads the messages the local SMTP fake stored. Only available when the fake runs (MAIL_OUTBOX_DIR set).
import { readdir, readFile } from "node:fs/promises";
import { join } from "node:path";
import { z } from "zod";
import { getEnv } from "./env.server";

export const OutboxMessageSchema = z.object({
  id: z.string(),
  receivedAt: z.string(),
  from: z.string(),
  to: z.string(),
  subject: z.string(),
  text: z.string(),
  html: z.string(),
});
export type OutboxMessage = z.infer<typeof OutboxMessageSchema>;

export function outboxEnabled(): boolean {
  return Boolean(getEnv().MAIL_OUTBOX_DIR);
}

export async function listOutbox(limit = 100): Promise<OutboxMessage[]> {
  const dir = getEnv().MAIL_OUTBOX_DIR;
  if (!dir) return [];
  let names: string[];
  try {
    names = (await readdir(dir)).filter((n) => n.endsWith(".json"));
  } catch {
    return [];
  }
  names.sort().reverse();
  const messages = await Promise.all(
    names.slice(0, limit).map(async (n) => OutboxMessageSchema.parse(JSON.parse(await readFile(join(dir, n), "utf8")))),
  );
  return messages;
}

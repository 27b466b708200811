/**
 * The local draft: the text being edited and the version it started from, kept in localStorage so a
 * reload, a crash or a refused save loses nothing. Read through zod: storage is outside input.
 */
import { z } from "zod";

const DraftSchema = z.object({
  v: z.literal(1),
  base: z.object({ id: z.string(), number: z.number().int(), text: z.string() }),
  text: z.string(),
  savedAt: z.number(),
});

export type Draft = z.infer<typeof DraftSchema>;

export const draftKey = (sceneId: string) => `tracewell:workspace-draft:${sceneId}`;

type StorageLike = Pick<Storage, "getItem" | "setItem" | "removeItem">;

export function loadDraft(storage: StorageLike, sceneId: string): Draft | null {
  try {
    const raw = storage.getItem(draftKey(sceneId));
    if (!raw) return null;
    const parsed = DraftSchema.safeParse(JSON.parse(raw));
    return parsed.success ? parsed.data : null;
  } catch {
    return null;
  }
}

export function saveDraft(storage: StorageLike, sceneId: string, draft: Omit<Draft, "v">): boolean {
  try {
    storage.setItem(draftKey(sceneId), JSON.stringify({ v: 1, ...draft }));
    return true;
  } catch {
    return false; // full or disabled storage: the page keeps working, only the crash safety is lost
  }
}

export function clearDraft(storage: StorageLike, sceneId: string): void {
  try {
    storage.removeItem(draftKey(sceneId));
  } catch {
    /* storage unavailable */
  }
}

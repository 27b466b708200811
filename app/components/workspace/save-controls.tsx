/**
 * Saving a version: a required message, the version the edit started from as the parent, and on a refused
 * save (someone saved first) a side-by-side account of their change and yours, with two ways forward.
 * The typed text is never replaced without an undo step, and the local draft keeps it across reloads.
 */
import { useEffect, useRef, useState } from "react";
import type { FetcherWithComponents } from "react-router";
import { Button, TextArea, toast } from "~/components/ui";
import { checkScene } from "~/lib/workspace-check";
import { combineEdits } from "~/lib/workspace-merge";
import { sceneToText } from "~/stores/workspace";
import { useWorkspace, useWorkspaceStore } from "./context";

export type ConflictHead = { id: string; number: number; message: string; authorName: string | null; createdAt: string; text: string };

export type SaveResult =
  | { ok: true; version: { id: string; number: number } }
  | { ok: false; kind: "invalid"; issues: { path: string; message: string }[] }
  | { ok: false; kind: "conflict"; head: ConflictHead; parentNumber: number | null; theirs: string[]; mine: string[]; overlap: string[] };

type Conflict = Extract<SaveResult, { kind: "conflict" }>;

export function SaveControls({ fetcher, onSaved }: { fetcher: FetcherWithComponents<SaveResult>; onSaved: () => void }) {
  const store = useWorkspaceStore();
  const hasIssues = useWorkspace((s) => s.issues.length > 0);
  const dirty = useWorkspace((s) => s.text !== s.base.text);
  const [open, setOpen] = useState(false);
  const [message, setMessage] = useState("");
  const [error, setError] = useState<string | null>(null);
  const [conflict, setConflict] = useState<Conflict | null>(null);
  const handled = useRef<SaveResult | undefined>(undefined);
  const messageRef = useRef<HTMLTextAreaElement>(null);
  const busy = fetcher.state !== "idle";

  useEffect(() => {
    const d = fetcher.data;
    if (!d || fetcher.state !== "idle" || handled.current === d) return;
    handled.current = d;
    if (d.ok) {
      store.getState().markSaved(d.version);
      onSaved();
      setOpen(false);
      setMessage("");
      setError(null);
      setConflict(null);
      toast(`Saved as version ${d.version.number}.`);
    } else if (d.kind === "invalid") {
      setError(d.issues.map((i) => (i.path ? `${i.path}: ${i.message}` : i.message)).join("\n"));
    } else {
      setConflict(d);
      setOpen(false);
    }
  }, [fetcher.data, fetcher.state, store, onSaved]);

  useEffect(() => {
    if (open) messageRef.current?.focus();
  }, [open]);

  const submit = (e: React.FormEvent) => {
    e.preventDefault();
    if (!message.trim()) {
      setError("Describe what changed: the message is required.");
      return;
    }
    const s = store.getState();
    setError(null);
    fetcher.submit({ intent: "save", message, parentVersionId: s.base.id, sceneText: s.text }, { method: "post" });
  };

  return (
    <div className="relative">
      <Button
        size="sm"
        tone="primary"
        onClick={() => setOpen((o) => !o)}
        disabled={hasIssues}
        title={hasIssues ? "Fix the problems in the scene before saving" : dirty ? "Save these edits as a new version" : "Nothing changed since the version you started from"}
        aria-expanded={open}
      >
        Save version…
      </Button>
      {open ? (
        <form
          onSubmit={submit}
          onKeyDown={(e) => {
            if (e.key === "Escape") setOpen(false);
          }}
          className="absolute right-0 z-30 mt-1 flex w-80 flex-col gap-2 rounded border border-line bg-panel p-3 shadow-xl"
          aria-label="Save a version"
        >
          <label htmlFor="save-message" className="text-xs font-medium text-ink-muted">
            What changed? <span className="text-ink-faint">(required)</span>
          </label>
          <TextArea
            id="save-message"
            ref={messageRef}
            data-native-undo
            rows={3}
            value={message}
            onChange={(e) => setMessage(e.target.value)}
            aria-invalid={Boolean(error)}
            aria-describedby={error ? "save-error" : undefined}
            placeholder="e.g. Warmer key on the kettle, fill down a stop"
            onKeyDown={(e) => {
              if (e.key === "Enter" && (e.ctrlKey || e.metaKey)) submit(e);
            }}
          />
          {error ? (
            <p id="save-error" role="alert" className="text-xs whitespace-pre-wrap text-danger">
              {error}
            </p>
          ) : null}
          {!dirty ? <p className="text-[11px] text-ink-faint">No edits since the version you started from; saving makes a copy with this message.</p> : null}
          <div className="flex justify-end gap-2">
            <Button size="sm" tone="quiet" onClick={() => setOpen(false)}>
              Cancel
            </Button>
            <Button size="sm" tone="primary" type="submit" disabled={busy}>
              {busy ? "Saving…" : "Save"}
            </Button>
          </div>
        </form>
      ) : null}
      {conflict ? (
        <ConflictDialog
          conflict={conflict}
          onCombine={(text) => {
            const s = store.getState();
            s.rebaseOnto({ id: conflict.head.id, number: conflict.head.number, text: conflict.head.text });
            s.edit(text, { source: "conflict", label: `combine my edits with version ${conflict.head.number}` });
            setConflict(null);
            setOpen(true);
            toast(`Version ${conflict.head.number} with your changes on top. Check the preview, then save.`);
          }}
          onClose={() => setConflict(null)}
          onKeepMine={() => {
            store.getState().rebaseOnto({ id: conflict.head.id, number: conflict.head.number, text: conflict.head.text });
            setConflict(null);
            setOpen(true); // the message typed before is still there
            toast(`Your edits now start from version ${conflict.head.number}. Save again to put them on top.`);
          }}
          onTakeTheirs={() => {
            store.getState().takeVersion({ id: conflict.head.id, number: conflict.head.number, text: conflict.head.text }, `take version ${conflict.head.number}`);
            setConflict(null);
            toast(`Loaded version ${conflict.head.number}. Undo brings your edits back.`);
          }}
        />
      ) : null}
    </div>
  );
}

/**
 * Their version plus my changes, offered only once it passes the scene check (run in the check worker);
 * null until then, or when my changes do not apply to theirs.
 */
function useCombined(conflict: Conflict): string | null {
  const store = useWorkspaceStore();
  const [combined, setCombined] = useState<string | null>(null);
  useEffect(() => {
    const s = store.getState();
    const merged = combineEdits(s.base.text, s.text, conflict.head.text);
    setCombined(null);
    if (merged === null) return;
    let live = true;
    checkScene(merged).then(
      (r) => live && setCombined(r.ok ? sceneToText(merged) : null),
      () => live && setCombined(null),
    );
    return () => {
      live = false;
    };
  }, [conflict, store]);
  return combined;
}

function ConflictDialog({
  conflict,
  onCombine,
  onClose,
  onKeepMine,
  onTakeTheirs,
}: {
  conflict: Conflict;
  onCombine: (text: string) => void;
  onClose: () => void;
  onKeepMine: () => void;
  onTakeTheirs: () => void;
}) {
  const combined = useCombined(conflict);
  const keepRef = useRef<HTMLButtonElement>(null);
  const combineRef = useRef<HTMLButtonElement>(null);
  // Focus starts on "Keep my edits"; it moves to "Combine" once that is known to work, unless the user moved on.
  useEffect(() => keepRef.current?.focus(), []);
  useEffect(() => {
    if (combined && document.activeElement === keepRef.current) combineRef.current?.focus();
  }, [combined]);
  const h = conflict.head;
  const from = conflict.parentNumber !== null ? `version ${conflict.parentNumber}` : "your starting version";
  return (
    <div className="fixed inset-0 z-50 flex items-center justify-center bg-black/60 p-4" onKeyDown={(e) => e.key === "Escape" && onClose()}>
      <div role="dialog" aria-modal="true" aria-labelledby="conflict-title" className="flex max-h-[90vh] w-[min(860px,100%)] flex-col gap-3 overflow-auto rounded border border-line bg-panel p-4 shadow-2xl" data-testid="save-conflict">
        <h2 id="conflict-title" className="text-base font-medium text-ink">
          Not saved: version {h.number} was saved while you were editing
        </h2>
        <p className="text-sm text-ink-muted">
          {h.authorName ?? "Someone"} saved version {h.number} (“{h.message}”, {new Date(h.createdAt).toLocaleString()}) on top of {from}, the version your edits
          started from. Your edits are safe: they stay in the editor and in this browser's draft.
        </p>
        {conflict.overlap.length > 0 ? (
          <p className="rounded border border-warn/40 bg-warn/10 px-2 py-1 text-xs text-warn">Both of you changed: {conflict.overlap.join("; ")}</p>
        ) : null}
        <div className="grid grid-cols-2 gap-3">
          <ChangeList title={`Their change (${from} → version ${h.number})`} lines={conflict.theirs} testId="conflict-theirs" />
          <ChangeList title={`Your change (${from} → your edits)`} lines={conflict.mine} testId="conflict-mine" />
        </div>
        <div className="flex flex-wrap justify-end gap-2">
          <Button size="sm" tone="quiet" onClick={onClose}>
            Close
          </Button>
          <Button size="sm" onClick={onTakeTheirs} title="Replace your text with version ${h.number} (undo brings yours back)">
            Use version {h.number} instead
          </Button>
          <Button
            ref={keepRef}
            size="sm"
            tone={combined ? "secondary" : "primary"}
            onClick={onKeepMine}
          >
            Keep my edits on top of version {h.number}
          </Button>
          {combined ? (
            <Button ref={combineRef} size="sm" tone="primary" onClick={() => onCombine(combined)}>
              Combine: version {h.number} plus my changes
            </Button>
          ) : null}
        </div>
        <p className="text-[11px] text-ink-faint">
          “Combine” starts from version {h.number} and re-applies each of your changes (where you both changed a field, yours wins); nothing is saved until you
          save again. “Keep my edits” saves your scene exactly as you see it, undoing their changes listed on the left.
        </p>
      </div>
    </div>
  );
}

function ChangeList({ title, lines, testId }: { title: string; lines: string[]; testId: string }) {
  return (
    <section aria-label={title} className="rounded border border-line" data-testid={testId}>
      <h3 className="border-b border-line px-2 py-1 text-xs font-medium text-ink">{title}</h3>
      {lines.length === 0 ? (
        <p className="px-2 py-1 text-xs text-ink-faint">No changes.</p>
      ) : (
        <ul className="max-h-64 overflow-auto px-2 py-1 font-mono text-[11px] text-ink-muted">
          {lines.map((l, i) => (
            <li key={i}>{l}</li>
          ))}
        </ul>
      )}
    </section>
  );
}

import { useEffect, useState } from "react";
import { useWorkspace } from "./context";

/**
 * True while the latest edit's check (in the check worker) has been running for a noticeable time; short
 * checks never flash a message.
 */
function useSlowCheck(): boolean {
  const pending = useWorkspace((s) => s.checkedRevision !== s.revision);
  const [slow, setSlow] = useState(false);
  useEffect(() => {
    if (!pending) {
      setSlow(false);
      return;
    }
    const t = setTimeout(() => setSlow(true), 400);
    return () => clearTimeout(t);
  }, [pending]);
  return slow;
}

/** Every validation problem, each naming its path; activating one moves the editor's cursor there. */
export function IssueList({ onReveal }: { onReveal: (path: string, line?: number, column?: number) => void }) {
  const issues = useWorkspace((s) => s.issues);
  const checking = useSlowCheck();
  if (issues.length === 0 && checking) {
    return (
      <p className="border-t border-line px-3 py-1.5 text-xs text-ink-muted" data-testid="scene-checking" role="status">
        Checking the latest edit…
      </p>
    );
  }
  if (issues.length === 0) {
    return (
      <p className="border-t border-line px-3 py-1.5 text-xs text-ok" data-testid="scene-valid">
        Scene is valid.
      </p>
    );
  }
  return (
    <section aria-label="Problems in the scene" className="max-h-36 overflow-y-auto border-t border-danger/40 bg-danger/5" data-testid="scene-issues">
      <p className="px-3 pt-1.5 text-xs font-medium text-danger" role="alert">
        {issues.length === 1 ? "1 problem" : `${issues.length} problems`}: the preview keeps the last valid scene.
        {checking ? <span className="font-normal text-ink-muted"> Checking the latest edit…</span> : null}
      </p>
      <ul className="px-1.5 pb-1.5 text-xs">
        {issues.map((i, k) => (
          <li key={k}>
            <button type="button" className="w-full rounded px-1.5 py-0.5 text-left hover:bg-raised" onClick={() => onReveal(i.path, i.line, i.column)}>
              <span className="font-mono text-danger">{i.path || "scene"}</span>
              <span className="text-ink">: {i.message}</span>
              {i.line !== undefined ? <span className="text-ink-faint"> (line {i.line})</span> : null}
            </button>
          </li>
        ))}
      </ul>
    </section>
  );
}

import { useWorkspace } from "./context";

/** Every validation problem, each naming its path; activating one moves the editor's cursor there. */
export function IssueList({ onReveal }: { onReveal: (path: string, line?: number, column?: number) => void }) {
  const issues = useWorkspace((s) => s.issues);
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

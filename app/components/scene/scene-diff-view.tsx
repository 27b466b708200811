// The structural diff, one card per changed light, material or object. Shared by the version compare page,
// the render compare page and the workspace's save-conflict view.
import { cx } from "~/components/ui";
import type { ChangeOp, SceneDiff } from "~/lib/scene-diff";

const OP_STYLE: Record<ChangeOp, string> = {
  added: "text-ok",
  removed: "text-danger",
  changed: "text-accent",
  moved: "text-ink-muted",
};

export function SceneDiffView({ diff, beforeLabel, afterLabel }: { diff: SceneDiff; beforeLabel?: string; afterLabel?: string }) {
  if (diff.identical) {
    return (
      <p className="text-sm text-ink-muted" data-testid="scene-diff-empty">
        No differences{diff.normalized ? " (defaults filled in before comparing)" : ""}.
      </p>
    );
  }
  return (
    <div className="flex flex-col gap-3" data-testid="scene-diff">
      <p className="text-sm text-ink-muted">
        {beforeLabel && afterLabel ? (
          <>
            From <span className="text-ink">{beforeLabel}</span> to <span className="text-ink">{afterLabel}</span>:{" "}
          </>
        ) : null}
        {diff.summary}.
      </p>
      <ul className="flex flex-col gap-2">
        {diff.changes.map((c) => (
          <li key={`${c.kind}:${c.id ?? ""}`} className="rounded border border-line bg-raised/40 px-3 py-2">
            <div className="flex items-baseline gap-2">
              <span className="font-medium text-ink">{c.label}</span>
              <span className={cx("text-xs uppercase tracking-wide", OP_STYLE[c.op])}>{c.op}</span>
            </div>
            <ul className="mt-1 flex flex-col gap-0.5 font-mono text-xs">
              {c.fields.map((f, i) => (
                <li key={i} className={OP_STYLE[f.op]} data-testid="scene-diff-line">
                  {f.text}
                </li>
              ))}
            </ul>
          </li>
        ))}
      </ul>
    </div>
  );
}

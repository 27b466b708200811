/**
 * Publishing the preview's render to the project's library. A render belongs to a saved version, so edits
 * must be saved first; the files are built from the pass-aligned accumulation inside the coordinator
 * worker and uploaded with progress. The server stores every file before it records the render, so a
 * failed upload leaves nothing behind.
 */
import { useMemo, useRef, useState } from "react";
import { Link } from "react-router";
import { Button, Input, toast } from "~/components/ui";
import { publishRenderUpload, type UploadProgress } from "~/lib/publish-render.client";
import { renderKey } from "~/lib/workspace-render-key";
import { useWorkspace, useWorkspaceStore } from "./context";
import { usePreview, usePreviewRenderer } from "./preview";

type Phase =
  | { kind: "idle" }
  | { kind: "preparing" }
  | { kind: "uploading"; fraction: number; progress?: UploadProgress }
  | { kind: "done"; url: string; spp: number; hash: string }
  | { kind: "failed"; error: string };

/** Why publishing is not possible right now, or null when it is. */
export function publishBlocker(p: {
  dirty: boolean;
  hasIssues: boolean;
  scale: number;
  settledSpp: number;
  status: string;
  busy: boolean;
  previewOfVersion: boolean;
}): string | null {
  if (p.hasIssues) return "Fix the problems in the scene first.";
  if (p.dirty) return "A render belongs to a saved version: save a version first.";
  if (p.busy) return "Publishing…";
  if (p.scale !== 1) return "Switch the preview to full resolution to publish.";
  if (!p.previewOfVersion) return "The preview is about to restart with this version; publishing follows its first full pass.";
  if (p.status === "error") return "The preview stopped with an error.";
  if (p.settledSpp < 1) return "Publishing is possible once every pixel has at least one full pass.";
  return null;
}

function mib(n: number): string {
  return n < 1024 * 1024 ? `${(n / 1024).toFixed(0)} KB` : `${(n / 1024 / 1024).toFixed(1)} MB`;
}

function progressText(p: UploadProgress | undefined, fraction: number): string {
  if (p?.phase === "hashing") return "checking…";
  if (p?.phase === "finishing") return "verifying…";
  return p ? `${Math.round(fraction * 100)}% · ${mib(p.loaded)} of ${mib(p.total)}` : `${Math.round(fraction * 100)}%`;
}

export function PublishControls({ projectId, sceneId }: { projectId: string; sceneId: string }) {
  const store = useWorkspaceStore();
  const renderer = usePreviewRenderer();
  const dirty = useWorkspace((s) => s.text !== s.base.text);
  const hasIssues = useWorkspace((s) => s.issues.length > 0);
  const scale = useWorkspace((s) => s.scale);
  const settledSpp = usePreview((s) => (s.scale === 1 ? s.settledSpp : 0));
  const status = usePreview((s) => s.status);
  const runKey = usePreview((s) => s.runKey);
  const baseText = useWorkspace((s) => s.base.text);
  const baseKey = useMemo(() => {
    try {
      return renderKey(JSON.parse(baseText) as unknown);
    } catch {
      return null;
    }
  }, [baseText]);
  const [open, setOpen] = useState(false);
  const [title, setTitle] = useState("");
  const [phase, setPhase] = useState<Phase>({ kind: "idle" });
  const abortRef = useRef<AbortController | null>(null);
  const busy = phase.kind === "preparing" || phase.kind === "uploading";
  const blocker = publishBlocker({ dirty, hasIssues, scale, settledSpp, status, busy, previewOfVersion: baseKey !== null && baseKey === runKey });

  const publish = async () => {
    const s = store.getState();
    if (!renderer || !s.lastGood || blocker) return;
    setPhase({ kind: "preparing" });
    const version = s.base;
    const scene = JSON.parse(version.text) as unknown;
    let pkg;
    try {
      pkg = await renderer.publishPackage(scene, s.lastGood.scene.display);
    } catch (e) {
      setPhase({ kind: "failed", error: `The render could not be packed: ${e instanceof Error ? e.message : String(e)}` });
      return;
    }
    if (!pkg) {
      setPhase({ kind: "failed", error: "The preview is restarting for this version; publish again once it shows a full pass." });
      return;
    }
    const ctrl = new AbortController();
    abortRef.current = ctrl;
    setPhase({ kind: "uploading", fraction: 0 });
    const result = await publishRenderUpload(
      {
        projectId,
        sceneId,
        meta: {
          versionId: version.id,
          title: title.trim() || undefined,
          spp: pkg.spp,
          seed: pkg.seed,
          width: pkg.files.width,
          height: pkg.files.height,
          integrator: pkg.integrator,
          tracerVersion: pkg.tracerVersion,
          accumulationHash: pkg.files.accumulationHash,
          renderMs: Math.round(pkg.renderMs),
          samplesPerSecond: Math.round(pkg.samplesPerSecond),
        },
        files: pkg.files,
      },
      { onProgress: (p) => setPhase({ kind: "uploading", fraction: p.fraction, progress: p }), signal: ctrl.signal },
    );
    abortRef.current = null;
    if (result.ok) {
      setPhase({ kind: "done", url: result.render.url, spp: pkg.spp, hash: result.render.accumulationHash });
      setTitle("");
      toast(`Render of version ${version.number} at ${pkg.spp} spp published to the library.`, "ok");
    } else {
      setPhase({ kind: "failed", error: result.error });
      toast(`Not published: ${result.error}`, "danger");
    }
  };

  return (
    <div className="relative">
      <Button size="sm" onClick={() => setOpen((o) => !o)} aria-expanded={open} data-testid="publish-open" title={blocker ?? "Keep this render in the project's library"}>
        Publish render…
      </Button>
      {open ? (
        <div
          role="group"
          aria-label="Publish render"
          onKeyDown={(e) => {
            if (e.key === "Escape" && !busy) setOpen(false);
          }}
          className="absolute right-0 z-30 mt-1 flex w-80 flex-col gap-2 rounded border border-line bg-panel p-3 text-xs shadow-xl"
        >
          <p className="text-ink-muted">
            Keeps the preview's current accumulation ({settledSpp} spp in every pixel) with its linear image, the picture as displayed, each light
            group and the facts needed to reproduce it.
          </p>
          <label htmlFor="publish-title" className="font-medium text-ink-muted">
            Title <span className="text-ink-faint">(optional)</span>
          </label>
          <Input id="publish-title" data-native-undo value={title} maxLength={200} onChange={(e) => setTitle(e.target.value)} placeholder="e.g. Kettle, warm key, review copy" />
          {blocker && !busy ? (
            <p className="text-warn" data-testid="publish-blocker">
              {blocker}
            </p>
          ) : null}
          {phase.kind === "uploading" || phase.kind === "preparing" ? (
            <div className="flex items-center gap-2">
              <div
                role="progressbar"
                aria-label="Upload progress"
                aria-valuemin={0}
                aria-valuemax={100}
                aria-valuenow={phase.kind === "uploading" ? Math.round(phase.fraction * 100) : 0}
                className="h-1.5 flex-1 overflow-hidden rounded bg-raised"
                data-testid="publish-progress"
              >
                <div className="h-full bg-accent" style={{ width: `${phase.kind === "uploading" ? phase.fraction * 100 : 0}%` }} />
              </div>
              <span className="tabular-nums text-ink-muted" data-testid="publish-progress-text">
                {phase.kind === "uploading" ? progressText(phase.progress, phase.fraction) : "packing…"}
              </span>
              {phase.kind === "uploading" ? (
                <Button size="sm" tone="quiet" onClick={() => abortRef.current?.abort()}>
                  Cancel
                </Button>
              ) : null}
            </div>
          ) : null}
          {phase.kind === "uploading" && phase.progress && phase.progress.phase !== "hashing" ? (
            <ul className="flex flex-col gap-0.5 text-ink-faint" aria-label="Files">
              {phase.progress.files.map((f) => (
                <li key={f.slot} className="flex justify-between tabular-nums" data-testid="publish-file" data-sent={f.loaded} data-size={f.total}>
                  <span>{f.name}</span>
                  <span>
                    {mib(f.loaded)} / {mib(f.total)}
                  </span>
                </li>
              ))}
            </ul>
          ) : null}
          {phase.kind === "done" ? (
            <p className="text-ok" data-testid="publish-result" data-accumulation-hash={phase.hash}>
              Published at {phase.spp} spp.{" "}
              <Link to={phase.url} className="underline">
                Open the render library
              </Link>
            </p>
          ) : null}
          {phase.kind === "failed" ? (
            <p role="alert" className="whitespace-pre-wrap text-danger" data-testid="publish-error">
              {phase.error}
            </p>
          ) : null}
          <div className="flex justify-end gap-2">
            <Button size="sm" tone="quiet" onClick={() => setOpen(false)} disabled={busy}>
              Close
            </Button>
            <Button size="sm" tone="primary" onClick={() => void publish()} disabled={Boolean(blocker)} data-testid="publish-render">
              {busy ? "Publishing…" : "Publish"}
            </Button>
          </div>
        </div>
      ) : null}
    </div>
  );
}

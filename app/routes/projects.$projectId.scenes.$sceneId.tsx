// The scene workspace: JSON editor and forms on one text, a progressive preview rendered in web workers,
// light balance, exposure tools and measuring, and saving versions with conflict handling.
import { lazy, Suspense, useEffect, useLayoutEffect, useMemo, useRef, useState } from "react";
import { Link, useFetcher, type ShouldRevalidateFunctionArgs } from "react-router";
import { z } from "zod";
import { useStore } from "zustand";
import { useWorkspaceStore, WorkspaceProvider } from "~/components/workspace/context";
import { LightBalancePanel, LookPanel, MeasurePanel } from "~/components/workspace/light-panels";
import { PreviewCanvas, PreviewProvider, ProgressStrip } from "~/components/workspace/preview";
import { PublishControls } from "~/components/workspace/publish-controls";
import { SaveControls, type SaveResult } from "~/components/workspace/save-controls";
import { SceneForms } from "~/components/workspace/scene-forms";
import { IssueList } from "~/components/workspace/issue-list";
import type { EditorHandle } from "~/components/workspace/scene-editor.client";
import { Button, cx } from "~/components/ui";
import { checkScene, startChecker } from "~/lib/workspace-check";
import { clearDraft, loadDraft, saveDraft } from "~/lib/workspace-draft";
import { renderKey, type PreviewRenderer } from "~/lib/workspace-render";
import { logActivity } from "~/models/activity.server";
import { getHead, getScene, getVersion, saveVersion } from "~/models/scene.server";
import { actorUserId, notFound, requireInProject } from "~/services/project-access.server";
import { checkVersionText, conflictAccount } from "~/lib/workspace-version.server";
import { createWorkspaceStore, sceneToText, type WorkspaceStore } from "~/stores/workspace";
import type { Route } from "./+types/projects.$projectId.scenes.$sceneId";
import { pageForm } from "~/services/body-limit.server";

// A saved scene travels as form text; 16 MiB is far above any scene the limits allow, far below a flood.
const SCENE_FORM_LIMIT = 16 * 1024 * 1024;

const SceneEditor = lazy(() => import("~/components/workspace/scene-editor.client"));

export function meta({ data: d }: Route.MetaArgs) {
  return [{ title: d ? `${d.scene.name} · Tracewell` : "Scene · Tracewell" }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireInProject(request, params.projectId, { sceneId: params.sceneId }, "view");
  const scene = await getScene(params.sceneId);
  if (!scene) notFound();
  const requested = new URL(request.url).searchParams.get("version");
  const version = requested ? await getVersion(requested) : await getHead(scene.id);
  if (!version || version.sceneId !== scene.id) notFound("That version is not part of this scene.");
  const isHead = version.id === scene.headVersionId;
  const text = sceneToText(version.scene);
  return {
    projectId: params.projectId,
    scene: { id: scene.id, name: scene.name },
    version: {
      id: version.id,
      number: version.number,
      message: version.message,
      authorName: version.authorName,
      createdAt: version.createdAt.toISOString(),
      text,
    },
    /** The version's check, so the page knows its issues and last good scene before its check worker starts. */
    check: checkVersionText(text),
    isHead,
    /** The ?version= asked for (null = the latest); the editing state is kept per opened address, not per head. */
    requestedVersionId: requested,
    role: access.role,
    canEdit: access.role !== "viewer" && isHead,
  };
}

const SaveForm = z.object({
  intent: z.literal("save"),
  message: z.string().trim().min(1, "Describe what changed: the message is required").max(2000, "The message is limited to 2000 characters"),
  parentVersionId: z.string().uuid("parentVersionId must be a version id"),
  sceneText: z.string().min(2, "The scene is empty").max(5_000_000, "The scene text is too large"),
});

export async function action({ request, params }: Route.ActionArgs): Promise<SaveResult> {
  const access = await requireInProject(request, params.projectId, { sceneId: params.sceneId }, "edit");
  const form = SaveForm.safeParse(Object.fromEntries(await pageForm(request, SCENE_FORM_LIMIT)));
  if (!form.success) {
    return { ok: false, kind: "invalid", issues: form.error.issues.map((i) => ({ path: i.path.join("."), message: i.message })) };
  }
  const { message, parentVersionId, sceneText } = form.data;
  // The parent must be a version of this very scene: a foreign id would otherwise be diffed into the conflict view.
  const claimedParent = await getVersion(parentVersionId);
  if (!claimedParent || claimedParent.sceneId !== params.sceneId) {
    return { ok: false, kind: "invalid", issues: [{ path: "parentVersionId", message: "is not a version of this scene" }] };
  }
  const result = await saveVersion({ sceneId: params.sceneId, parentVersionId, scene: sceneText, message, authorId: actorUserId(access.actor) });
  if (result.ok) {
    await logActivity(access.projectId, actorUserId(access.actor), "scene.saved", { sceneId: params.sceneId, versionId: result.version.id, number: result.version.number });
    return { ok: true, version: { id: result.version.id, number: result.version.number } };
  }
  if (result.reason === "invalid") return { ok: false, kind: "invalid", issues: result.issues };
  if (result.reason === "not_found") notFound();
  // Someone saved first: show what they changed and what you changed, each against the version you started from.
  const account = conflictAccount(claimedParent.scene, result.head.scene, JSON.parse(sceneText) as unknown);
  return {
    ok: false,
    kind: "conflict",
    head: {
      id: result.head.id,
      number: result.head.number,
      message: result.head.message,
      authorName: result.head.authorName,
      createdAt: result.head.createdAt.toISOString(),
      text: sceneToText(result.head.scene),
    },
    parentNumber: claimedParent.number,
    ...account,
  };
}

/** A save answers through the store (new base, conflict view); reloading this page's data would only cost time. */
export function shouldRevalidate({ formMethod, currentUrl, nextUrl, defaultShouldRevalidate }: ShouldRevalidateFunctionArgs) {
  if (formMethod === "POST" && currentUrl.pathname === nextUrl.pathname) return false;
  return defaultShouldRevalidate;
}

function ClientOnly({ children, fallback }: { children: () => React.ReactNode; fallback: React.ReactNode }) {
  const [mounted, setMounted] = useState(false);
  useEffect(() => setMounted(true), []);
  return <>{mounted ? children() : fallback}</>;
}

type SideTab = "scene" | "balance" | "look" | "measure";
const SIDE_TABS: { id: SideTab; label: string }[] = [
  { id: "scene", label: "Scene" },
  { id: "balance", label: "Light balance" },
  { id: "look", label: "Look" },
  { id: "measure", label: "Measure" },
];

export default function Workspace({ loaderData }: Route.ComponentProps) {
  const { scene, version, projectId, canEdit, isHead, role } = loaderData;
  // One store per opened version; later loader revalidations (after a save) must not reset the editing state.
  const store = useMemo<WorkspaceStore>(
    () =>
      createWorkspaceStore(
        { sceneId: scene.id, canEdit, base: { id: version.id, number: version.number, text: version.text }, check: loaderData.check },
        // Checks run in a worker; the store keeps at most one in flight and drops answers to older text.
        { validate: checkScene },
      ),
    // eslint-disable-next-line react-hooks/exhaustive-deps
    [scene.id, loaderData.requestedVersionId],
  );
  const [renderer, setRenderer] = useState<PreviewRenderer | null>(null);
  const [draftNotice, setDraftNotice] = useState<string | null>(null);
  const [tab, setTab] = useState<SideTab>("scene");
  const editorRef = useRef<EditorHandle | null>(null);
  // Fill the window below whatever the surrounding layouts put above the workspace.
  const frameRef = useRef<HTMLDivElement>(null);
  const [frameHeight, setFrameHeight] = useState<string>("calc(100vh - 3rem)");
  useLayoutEffect(() => {
    const fit = () => {
      const el = frameRef.current;
      if (el) setFrameHeight(`${Math.max(520, window.innerHeight - el.getBoundingClientRect().top - window.scrollY)}px`);
    };
    fit();
    window.addEventListener("resize", fit);
    return () => window.removeEventListener("resize", fit);
  }, []);

  // Restore a local draft once, after hydration (storage exists only in the browser).
  useEffect(() => {
    if (!canEdit) return;
    startChecker();
    const draft = loadDraft(window.localStorage, scene.id);
    if (!draft || draft.text === store.getState().text) return;
    store.setState({ base: draft.base });
    store.getState().edit(draft.text, { source: "load", label: "restore the unsaved draft" });
    const when = new Date(draft.savedAt).toLocaleString();
    setDraftNotice(`Restored your unsaved edits from ${when} (started from version ${draft.base.number}). Undo goes back to the saved version.`);
  }, [store, canEdit, scene.id]);

  // Keep the draft current (debounced); a text equal to its base needs no draft.
  useEffect(() => {
    if (!canEdit) return;
    let t: ReturnType<typeof setTimeout> | undefined;
    const unsub = store.subscribe((s, prev) => {
      if (s.text === prev.text && s.base === prev.base) return;
      clearTimeout(t);
      t = setTimeout(() => {
        const cur = store.getState();
        if (cur.text === cur.base.text) clearDraft(window.localStorage, scene.id);
        else saveDraft(window.localStorage, scene.id, { base: cur.base, text: cur.text, savedAt: Date.now() });
      }, 300);
    });
    return () => {
      clearTimeout(t);
      unsub();
    };
  }, [store, canEdit, scene.id]);

  // The render coordinator lives in a worker; created in the browser only.
  useEffect(() => {
    let r: PreviewRenderer | null = null;
    let cancelled = false;
    void import("~/lib/workspace-render").then(({ PreviewRenderer }) => {
      if (cancelled) return;
      r = new PreviewRenderer(`/projects/${projectId}/assets/`);
      setRenderer(r);
    });
    return () => {
      cancelled = true;
      r?.dispose();
    };
  }, [projectId]);

  // Valid edits restart the render after a short pause in typing; display-only edits never do.
  useEffect(() => {
    if (!renderer) return;
    let lastKey = "";
    let lastScale = store.getState().scale;
    let t: ReturnType<typeof setTimeout> | undefined;
    const kick = (immediate: boolean) => {
      const s = store.getState();
      if (!s.lastGood) return;
      const key = renderKey(s.lastGood.scene);
      if (key === lastKey && s.scale === lastScale && !immediate) return;
      lastKey = key;
      lastScale = s.scale;
      clearTimeout(t);
      const go = () => renderer.start(JSON.parse(s.lastGood!.text) as unknown, { scale: s.scale, noiseTarget: s.noiseTarget });
      if (immediate) go();
      else t = setTimeout(go, 350);
    };
    kick(true);
    const unsub = store.subscribe((s, prev) => {
      if (s.scale !== prev.scale) kick(true);
      else if (s.lastGood !== prev.lastGood) kick(false);
    });
    return () => {
      clearTimeout(t);
      unsub();
    };
  }, [renderer, store]);

  const restart = () => {
    const s = store.getState();
    if (renderer && s.lastGood) renderer.start(JSON.parse(s.lastGood.text) as unknown, { scale: s.scale, noiseTarget: s.noiseTarget });
  };

  // Undo/redo keys anywhere in the workspace (the editor binds its own; text boxes keep their native undo).
  useEffect(() => {
    const onKey = (e: KeyboardEvent) => {
      if (!(e.ctrlKey || e.metaKey) || e.altKey) return;
      const t = e.target as HTMLElement | null;
      if (t?.closest(".monaco-editor") || t?.closest("[data-native-undo]")) return;
      const k = e.key.toLowerCase();
      if (k === "z" && !e.shiftKey) {
        e.preventDefault();
        store.getState().undo();
      } else if ((k === "z" && e.shiftKey) || k === "y") {
        e.preventDefault();
        store.getState().redo();
      }
    };
    window.addEventListener("keydown", onKey);
    return () => window.removeEventListener("keydown", onKey);
  }, [store]);

  return (
    <WorkspaceProvider value={store}>
      <PreviewProvider renderer={renderer}>
        <div ref={frameRef} style={{ height: frameHeight }} className="flex min-h-[520px] flex-col" data-testid="workspace">
          <WorkspaceHeader
            sceneName={scene.name}
            projectId={projectId}
            sceneId={scene.id}
            isHead={isHead}
            role={role}
            version={version}
            onSaved={() => clearDraft(window.localStorage, scene.id)}
          />
          {draftNotice ? (
            <div role="status" className="flex items-center gap-2 border-b border-line bg-raised px-3 py-1 text-xs text-ink-muted">
              <span>{draftNotice}</span>
              <Button size="sm" tone="quiet" className="ml-auto" onClick={() => setDraftNotice(null)}>
                Dismiss
              </Button>
            </div>
          ) : null}
          <div className="grid min-h-0 flex-1 grid-cols-[minmax(300px,34%)_minmax(0,1fr)_300px]">
            <section aria-label="Scene JSON" className="flex min-h-0 flex-col border-r border-line">
              <div className="min-h-0 flex-1">
                <ClientOnly fallback={<pre className="h-full overflow-auto p-2 font-mono text-xs text-ink-muted">{version.text}</pre>}>
                  {() => (
                    <Suspense fallback={<pre className="h-full overflow-auto p-2 font-mono text-xs text-ink-muted">{store.getState().text}</pre>}>
                      <SceneEditor store={store} onReady={(h) => (editorRef.current = h)} />
                    </Suspense>
                  )}
                </ClientOnly>
              </div>
              <IssueList onReveal={(path, line, column) => editorRef.current?.revealPath(path, line, column)} />
            </section>
            <section aria-label="Preview" className="flex min-h-0 min-w-0 flex-col">
              <PreviewCanvas />
              <ProgressStrip onRestart={restart} />
            </section>
            <aside aria-label="Controls" className="flex min-h-0 flex-col border-l border-line bg-panel/40">
              <div role="tablist" aria-label="Workspace panels" className="flex border-b border-line text-xs">
                {SIDE_TABS.map((t) => (
                  <button
                    key={t.id}
                    id={`tab-${t.id}`}
                    role="tab"
                    type="button"
                    aria-selected={tab === t.id}
                    aria-controls={`panel-${t.id}`}
                    tabIndex={tab === t.id ? 0 : -1}
                    onClick={() => setTab(t.id)}
                    onKeyDown={(e) => {
                      const i = SIDE_TABS.findIndex((x) => x.id === tab);
                      if (e.key === "ArrowRight" || e.key === "ArrowLeft") {
                        const next = SIDE_TABS[(i + (e.key === "ArrowRight" ? 1 : SIDE_TABS.length - 1)) % SIDE_TABS.length]!;
                        setTab(next.id);
                        document.getElementById(`tab-${next.id}`)?.focus();
                      }
                    }}
                    className={cx("flex-1 px-1 py-2", tab === t.id ? "border-b-2 border-accent text-ink" : "text-ink-muted hover:text-ink")}
                  >
                    {t.label}
                  </button>
                ))}
              </div>
              <div id={`panel-${tab}`} role="tabpanel" aria-labelledby={`tab-${tab}`} className="min-h-0 flex-1 overflow-y-auto">
                {tab === "scene" ? <SceneForms /> : null}
                {tab === "balance" ? <LightBalancePanel /> : null}
                {tab === "look" ? <LookPanel /> : null}
                {tab === "measure" ? <MeasurePanel /> : null}
              </div>
            </aside>
          </div>
        </div>
      </PreviewProvider>
    </WorkspaceProvider>
  );
}

function WorkspaceHeader({
  sceneName,
  projectId,
  sceneId,
  isHead,
  role,
  version,
  onSaved,
}: {
  sceneName: string;
  projectId: string;
  sceneId: string;
  isHead: boolean;
  role: string;
  version: { number: number; message: string; authorName: string | null };
  onSaved: () => void;
}) {
  const store = useWorkspaceStore();
  const base = useStore(store, (s) => s.base);
  const dirty = useStore(store, (s) => s.text !== s.base.text);
  const canUndo = useStore(store, (s) => s.past.length > 0);
  const canRedo = useStore(store, (s) => s.future.length > 0);
  const canEdit = useStore(store, (s) => s.canEdit);
  const fetcher = useFetcher<SaveResult>();
  return (
    <header className="flex flex-wrap items-center gap-x-3 gap-y-1 border-b border-line bg-panel px-3 py-1.5">
      <nav aria-label="Breadcrumb" className="flex min-w-0 items-center gap-1 text-sm">
        <Link to={`/projects/${projectId}`} className="text-ink-muted hover:text-ink">
          Project
        </Link>
        <span className="text-ink-faint">/</span>
        <h1 className="truncate font-medium">{sceneName}</h1>
      </nav>
      <span className="text-xs text-ink-muted" data-testid="base-version">
        {isHead ? `from version ${base.number}` : `viewing version ${version.number} (not the latest, read-only)`}
      </span>
      {dirty ? (
        <span className="rounded bg-warn/15 px-1.5 py-0.5 text-[11px] text-warn" data-testid="unsaved">
          unsaved edits
        </span>
      ) : null}
      <div className="ml-auto flex items-center gap-1.5">
        <Button size="sm" tone="quiet" onClick={() => store.getState().undo()} disabled={!canUndo} title="Undo (Ctrl+Z)">
          Undo
        </Button>
        <Button size="sm" tone="quiet" onClick={() => store.getState().redo()} disabled={!canRedo} title="Redo (Ctrl+Shift+Z or Ctrl+Y)">
          Redo
        </Button>
        <Link to={`/projects/${projectId}/scenes/${sceneId}/history`} className="px-2 text-xs text-ink-muted hover:text-ink">
          History
        </Link>
        {role !== "viewer" ? <PublishControls projectId={projectId} sceneId={sceneId} /> : null}
        {canEdit ? (
          <SaveControls fetcher={fetcher} onSaved={onSaved} />
        ) : (
          <span className="text-xs text-ink-faint" data-testid="read-only">
            {role === "viewer" ? "Read-only: viewers can look and measure but not edit or save." : "Open the latest version to save."}
          </span>
        )}
      </div>
    </header>
  );
}

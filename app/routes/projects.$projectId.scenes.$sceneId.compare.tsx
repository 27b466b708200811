// Two versions side by side as a structural diff: two versions of this scene, or a fork against its origin
// (the origin may live in another project; it is shown only to people who may see it).
import { Link } from "react-router";
import { SceneDiffView } from "~/components/scene/scene-diff-view";
import { buttonClass, Notice, Panel } from "~/components/ui";
import { diffScenes } from "~/lib/scene-diff";
import { getScene, getVersion, type Version } from "~/models/scene.server";
import { authorize } from "~/services/permissions.server";
import { notFound, requireInProject } from "~/services/project-access.server";
import type { Route } from "./+types/projects.$projectId.scenes.$sceneId.compare";

export function meta() {
  return [{ title: "Compare versions · Tracewell" }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireInProject(request, params.projectId, { sceneId: params.sceneId }, "view");
  const scene = await getScene(params.sceneId);
  if (!scene) notFound();
  const url = new URL(request.url);
  const load = async (id: string | null): Promise<(Version & { sceneName: string }) | null> => {
    if (!id) return null;
    const v = await getVersion(id);
    if (!v) return null;
    if (!(await authorize(access.actor, { versionId: v.id }, "view")).ok) return null;
    const s = v.sceneId === scene.id ? scene : await getScene(v.sceneId);
    return { ...v, sceneName: s?.name ?? "?" };
  };
  const [a, b] = await Promise.all([load(url.searchParams.get("a")), load(url.searchParams.get("b"))]);
  if (!a || !b) return { projectId: params.projectId, scene: { id: scene.id, name: scene.name }, missing: true as const };
  const diff = diffScenes(a.scene, b.scene);
  const label = (v: typeof a) => `${v.sceneId === scene.id ? "" : `${v.sceneName} `}v${v.number}`;
  return {
    projectId: params.projectId,
    scene: { id: scene.id, name: scene.name },
    missing: false as const,
    a: { id: a.id, label: label(a), message: a.message, author: a.authorName, createdAt: a.createdAt.toISOString() },
    b: { id: b.id, label: label(b), message: b.message, author: b.authorName, createdAt: b.createdAt.toISOString() },
    diff,
    json: { a: JSON.stringify(a.scene, null, 2), b: JSON.stringify(b.scene, null, 2) },
  };
}

export default function CompareVersions({ loaderData }: Route.ComponentProps) {
  const d = loaderData;
  const base = `/projects/${d.projectId}/scenes/${d.scene.id}`;
  return (
    <div className="flex flex-col gap-4 p-6">
      <header className="flex items-center gap-3">
        <h2 className="text-lg font-medium">Compare versions · {d.scene.name}</h2>
        <Link className={buttonClass("secondary", "sm", "ml-auto")} to={`${base}/history`}>
          Back to history
        </Link>
      </header>
      {d.missing ? (
        <Notice tone="warn">Pick two versions on the history page (one of them was not found or is not visible to you).</Notice>
      ) : (
        <>
          <div className="grid gap-3 md:grid-cols-2">
            {[d.a, d.b].map((v, i) => (
              <Panel key={v.id} title={`${i === 0 ? "From" : "To"} ${v.label}`}>
                <p className="text-sm">{v.message}</p>
                <p className="text-xs text-ink-muted">
                  {v.author ?? "—"} · {new Date(v.createdAt).toLocaleString()}
                </p>
              </Panel>
            ))}
          </div>
          <Panel title="What changed">
            <SceneDiffView diff={d.diff} beforeLabel={d.a.label} afterLabel={d.b.label} />
          </Panel>
          <details className="rounded border border-line bg-panel p-3 text-xs">
            <summary className="cursor-pointer text-ink-muted">Scene JSON of both versions</summary>
            <div className="mt-2 grid gap-3 md:grid-cols-2">
              <pre className="max-h-96 overflow-auto">{d.json.a}</pre>
              <pre className="max-h-96 overflow-auto">{d.json.b}</pre>
            </div>
          </details>
        </>
      )}
    </div>
  );
}

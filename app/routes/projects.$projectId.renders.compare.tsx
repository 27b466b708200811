// Two renders side by side: a wipe, a false-colour difference, RMSE/PSNR/SSIM on linear or displayed values,
// the diff of their scene versions, and a bit-exact reproduction check of either render in this browser.
// A belongs to this project; B may be in any project the person can see (a fork's render against its origin's),
// each authorised on its own, so a render of a project they cannot see is the same 404 as a made-up id.
import { decode as decodePng } from "fast-png";
import { useRef, useState } from "react";
import { Link } from "react-router";
import { decodePfm } from "@tracer/io/pfm";
import { encodePng } from "@tracer/io/png";
import { SceneDiffView } from "~/components/scene/scene-diff-view";
import { Button, buttonClass, Notice, Panel } from "~/components/ui";
import { compareImages, differenceImage, type MetricMode, type Metrics, type Picture } from "~/lib/image-metrics";
import { reproduceRender } from "~/lib/reproduce.client";
import { diffScenes } from "~/lib/scene-diff";
import { getRender, listRenders, type RenderListItem } from "~/models/render.server";
import { getScene, getVersion } from "~/models/scene.server";
import { readRenderFile } from "~/services/render-files.server";
import { authorize, requireAccess, type Actor } from "~/services/permissions.server";
import { requireInProject } from "~/services/project-access.server";
import type { Route } from "./+types/projects.$projectId.renders.compare";

export function meta() {
  return [{ title: "Compare renders · Tracewell" }];
}

async function picture(r: RenderListItem, mode: MetricMode): Promise<Picture | null> {
  if (mode === "linear") {
    const bytes = await readRenderFile(r.files, "pfm");
    if (!bytes) return null;
    const img = decodePfm(bytes);
    return { width: img.width, height: img.height, channels: 3, data: img.data };
  }
  const bytes = await readRenderFile(r.files, "png");
  if (!bytes) return null;
  const png = decodePng(bytes);
  if (png.depth !== 8 || (png.channels !== 3 && png.channels !== 4)) return null;
  return { width: png.width, height: png.height, channels: png.channels as 3 | 4, data: png.data };
}

function dataUrl(png: Uint8Array): string {
  return `data:image/png;base64,${Buffer.from(png).toString("base64")}`;
}

/** When A's scene is a fork: the latest renders of its origin scene, if the person may see the origin's project. */
async function originRenders(actor: Actor, a: RenderListItem): Promise<{ id: string; label: string }[]> {
  const scene = await getScene(a.sceneId);
  const origin = scene?.forkedFromVersionId ? await getVersion(scene.forkedFromVersionId) : null;
  const originScene = origin ? await getScene(origin.sceneId) : null;
  if (!originScene || !(await authorize(actor, { projectId: originScene.projectId }, "view")).ok) return [];
  const { rows } = await listRenders(originScene.projectId, { sceneId: originScene.id }, { page: 1, pageSize: 6 });
  return rows.map((r) => ({ id: r.id, label: `${r.sceneName} v${r.versionNumber}${r.title ? ` · ${r.title}` : ""} · ${r.spp} spp` }));
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const url = new URL(request.url);
  const ids = [url.searchParams.get("a") ?? "", url.searchParams.get("b") ?? ""];
  const access = await requireInProject(request, params.projectId, { renderId: ids[0]! }, "view");
  await requireAccess(request, { renderId: ids[1]! }, "view");
  const [a, b] = (await Promise.all(ids.map((id) => getRender(id)))) as [RenderListItem, RenderListItem];
  const mode: MetricMode = url.searchParams.get("mode") === "display" ? "display" : "linear";
  const [va, vb] = await Promise.all([getVersion(a.versionId), getVersion(b.versionId)]);

  let metrics: Metrics | null = null;
  let diffImage: { url: string; scale: number } | null = null;
  let metricsError: string | null = null;
  try {
    const [pa, pb] = await Promise.all([picture(a, mode), picture(b, mode)]);
    if (!pa || !pb) throw new Error(`a render has no ${mode === "linear" ? "linear (PFM)" : "displayed (PNG)"} file`);
    metrics = compareImages(pa, pb, mode);
    const d = differenceImage(pa, pb);
    diffImage = { url: dataUrl(encodePng(d.width, d.height, d.rgba)), scale: d.scale };
  } catch (e) {
    metricsError = e instanceof Error ? e.message : String(e);
  }

  const present = (r: RenderListItem, v: typeof va) => ({
    id: r.id,
    label: `${r.sceneName} v${r.versionNumber}${r.title ? ` · ${r.title}` : ""}`,
    sceneId: r.sceneId,
    versionId: r.versionId,
    spp: r.spp,
    seed: r.seed,
    width: r.width,
    height: r.height,
    integrator: r.integrator,
    tracerVersion: r.tracerVersion,
    accumulationHash: r.accumulationHash,
    authorName: r.authorName,
    createdAt: r.createdAt.toISOString(),
    scene: v?.scene ?? null,
    projectId: r.projectId,
    otherProject: r.projectId !== params.projectId,
    png: `/projects/${r.projectId}/renders/${r.id}/files/png`,
  });

  return {
    projectId: params.projectId,
    originRenders: await originRenders(access.actor, a),
    mode,
    a: present(a, va),
    b: present(b, vb),
    metrics: metrics && { ...metrics, psnr: Number.isFinite(metrics.psnr) ? metrics.psnr : null },
    metricsError,
    diffImage,
    sceneDiff: va && vb ? diffScenes(va.scene, vb.scene) : null,
  };
}

type Side = Awaited<ReturnType<typeof loader>>["a"];

function fmt(n: number, digits = 4): string {
  if (n === 0) return "0";
  return Math.abs(n) >= 0.01 && Math.abs(n) < 1e5 ? n.toFixed(digits) : n.toExponential(3);
}

function Reproduce({ side, projectId }: { side: Side; projectId: string }) {
  const [state, setState] = useState<{ phase: "idle" | "running" | "done" | "error"; text: string; progress: number; matches?: boolean | null }>({
    phase: "idle",
    text: "",
    progress: 0,
  });
  const abort = useRef<AbortController | null>(null);
  const run = async () => {
    abort.current = new AbortController();
    setState({ phase: "running", text: "Loading the scene and its assets…", progress: 0 });
    try {
      const r = await reproduceRender({
        scene: side.scene,
        seed: side.seed,
        spp: side.spp,
        expectedHash: side.accumulationHash,
        tracerVersion: side.tracerVersion,
        assetUrl: (sha) => `/projects/${projectId}/assets/${sha}`,
        signal: abort.current.signal,
        onProgress: (e) => setState((s) => ({ ...s, text: `Rendering: ${e.passesDone} / ${e.spp} spp`, progress: e.passesDone / e.spp })),
      });
      const verdict = r.matches
        ? `Bit-identical: the accumulation hash ${r.hash} matches.`
        : `Different: this browser got ${r.hash}, the stored render has ${side.accumulationHash ?? "no hash"}.${r.sameTracerVersion ? "" : ` The render was made with ${side.tracerVersion}; this browser runs ${r.tracerVersion}.`}`;
      setState({ phase: "done", text: `${verdict} (${(r.elapsedMs / 1000).toFixed(1)} s)`, progress: 1, matches: r.matches });
    } catch (e) {
      setState({ phase: "error", text: e instanceof Error ? e.message : String(e), progress: 0 });
    }
  };
  return (
    <div className="flex flex-col gap-2">
      <div className="flex items-center gap-2">
        <Button size="sm" onClick={run} disabled={state.phase === "running" || !side.scene} data-testid={`reproduce-${side.id}`}>
          Reproduce in this browser
        </Button>
        {state.phase === "running" ? (
          <Button size="sm" tone="quiet" onClick={() => abort.current?.abort()}>
            Cancel
          </Button>
        ) : null}
      </div>
      {state.phase === "running" ? <progress className="w-full" value={state.progress} max={1} /> : null}
      {state.text ? (
        <p
          className={state.phase === "done" ? (state.matches ? "text-sm text-ok" : "text-sm text-danger") : state.phase === "error" ? "text-sm text-danger" : "text-sm text-ink-muted"}
          data-testid="reproduce-result"
          data-matches={state.matches === undefined ? undefined : String(state.matches)}
        >
          {state.text}
        </p>
      ) : null}
    </div>
  );
}

export default function CompareRenders({ loaderData }: Route.ComponentProps) {
  const d = loaderData;
  const [wipe, setWipe] = useState(50);
  const base = `/projects/${d.projectId}/renders`;
  const modeHref = (m: MetricMode) => `${base}/compare?a=${d.a.id}&b=${d.b.id}&mode=${m}`;
  const sameSize = d.a.width === d.b.width && d.a.height === d.b.height;

  return (
    <div className="flex flex-col gap-4 p-6">
      <div className="flex flex-wrap items-center gap-3">
        <h2 className="text-lg font-medium">
          {d.a.label} <span className="text-ink-muted">vs</span> {d.b.label}
        </h2>
        <Link className={buttonClass("secondary", "sm", "ml-auto")} to={base}>
          Back to the library
        </Link>
      </div>

      <div className="grid gap-3 lg:grid-cols-2">
        {[d.a, d.b].map((side, i) => (
          <Panel key={side.id} title={`${i === 0 ? "A" : "B"}: ${side.label}${side.otherProject ? " (another project)" : ""}`}>
            <img src={side.png} alt={`Render ${i === 0 ? "A" : "B"}`} className="w-full rounded border border-line [image-rendering:pixelated]" />
            <dl className="mt-2 grid grid-cols-2 gap-x-3 text-xs text-ink-muted">
              <dt>spp · seed</dt>
              <dd>
                {side.spp} · {side.seed}
              </dd>
              <dt>integrator</dt>
              <dd>{side.integrator}</dd>
              <dt>size</dt>
              <dd>
                {side.width}×{side.height}
              </dd>
              <dt>tracer</dt>
              <dd>{side.tracerVersion}</dd>
              <dt>hash</dt>
              <dd className="font-mono break-all">{side.accumulationHash ?? "—"}</dd>
              <dt>by</dt>
              <dd>
                {side.authorName ?? "—"}, {new Date(side.createdAt).toLocaleString()}
              </dd>
            </dl>
            <div className="mt-3">
              <Reproduce side={side} projectId={side.projectId} />
            </div>
          </Panel>
        ))}
      </div>

      {d.originRenders.length ? (
        <p className="flex flex-wrap items-center gap-2 text-sm text-ink-muted" data-testid="origin-renders">
          A is a render of a fork. Compare it with a render of the scene it was forked from:
          {d.originRenders.map((r) => (
            <Link key={r.id} className="text-accent hover:underline" to={`${base}/compare?a=${d.a.id}&b=${r.id}&mode=${d.mode}`}>
              {r.label}
            </Link>
          ))}
        </p>
      ) : null}

      <div className="grid gap-3 lg:grid-cols-2">
        <Panel title="Wipe">
          {sameSize ? (
            <>
              <div className="relative w-full overflow-hidden rounded border border-line" data-testid="wipe">
                <img src={d.b.png} alt="" className="block w-full [image-rendering:pixelated]" />
                <img src={d.a.png} alt="" className="absolute inset-0 block w-full [image-rendering:pixelated]" style={{ clipPath: `inset(0 ${100 - wipe}% 0 0)` }} />
                <div className="pointer-events-none absolute top-0 bottom-0 w-px bg-accent" style={{ left: `${wipe}%` }} />
              </div>
              <input type="range" min={0} max={100} value={wipe} onChange={(e) => setWipe(Number(e.target.value))} aria-label="Wipe position (A on the left)" className="mt-2 w-full" />
            </>
          ) : (
            <Notice tone="warn">The renders differ in size; the wipe needs equal sizes.</Notice>
          )}
        </Panel>
        <Panel
          title="Difference"
          actions={
            <div className="flex gap-1" role="group" aria-label="Compare values">
              <Link className={buttonClass(d.mode === "linear" ? "primary" : "secondary", "sm")} to={modeHref("linear")} preventScrollReset>
                Linear radiance
              </Link>
              <Link className={buttonClass(d.mode === "display" ? "primary" : "secondary", "sm")} to={modeHref("display")} preventScrollReset>
                Displayed 8-bit
              </Link>
            </div>
          }
        >
          {d.metricsError ? <Notice tone="warn">{d.metricsError}</Notice> : null}
          {d.diffImage ? (
            <>
              <img src={d.diffImage.url} alt="False-colour difference" className="w-full rounded border border-line [image-rendering:pixelated]" data-testid="difference-image" />
              <p className="mt-1 text-xs text-ink-faint">
                Black: equal. White: the largest difference ({fmt(d.diffImage.scale)} {d.mode === "linear" ? "radiance" : "code values"}, RGB distance).
              </p>
            </>
          ) : null}
          {d.metrics ? (
            <dl className="mt-3 grid grid-cols-3 gap-2 text-center" data-testid="metrics">
              <div className="rounded bg-raised p-2">
                <dt className="text-xs text-ink-muted">RMSE</dt>
                <dd className="font-mono" data-testid="metric-rmse">
                  {fmt(d.metrics.rmse, 5)}
                </dd>
              </div>
              <div className="rounded bg-raised p-2">
                <dt className="text-xs text-ink-muted">PSNR (peak {Number(d.metrics.peak.toPrecision(4))})</dt>
                <dd className="font-mono" data-testid="metric-psnr">
                  {d.metrics.psnr === null ? "∞ (identical)" : `${d.metrics.psnr.toFixed(2)} dB`}
                </dd>
              </div>
              <div className="rounded bg-raised p-2">
                <dt className="text-xs text-ink-muted">SSIM</dt>
                <dd className="font-mono" data-testid="metric-ssim">
                  {d.metrics.ssim.toFixed(5)}
                </dd>
              </div>
            </dl>
          ) : null}
          <p className="mt-2 text-xs text-ink-faint">
            SSIM after Wang et al. (2004) via ssim.js, on grey values; linear radiance is scaled by the larger peak of the two renders first.
          </p>
        </Panel>
      </div>

      <Panel title="Scene versions: what changed from A to B">
        {d.sceneDiff ? <SceneDiffView diff={d.sceneDiff} beforeLabel={d.a.label} afterLabel={d.b.label} /> : <Notice tone="warn">A version is missing.</Notice>}
      </Panel>
    </div>
  );
}

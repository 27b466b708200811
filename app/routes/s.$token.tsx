// A share link, open to anyone who has it, signed in or not: the version (read-only), its published renders,
// a render in the visitor's own browser with the reproducibility check, and, when signed in, a fork into a
// project of their own.
import { useRef, useState } from "react";
import { data, Form, Link, redirect } from "react-router";
import { z } from "zod";
import { Button, Notice, Panel, Select } from "~/components/ui";
import { reproduceRender } from "~/lib/reproduce.client";
import { logActivity } from "~/models/activity.server";
import { copyAssetsForScene } from "~/models/asset.server";
import { listProjectsForUser } from "~/models/project.server";
import { listRendersForVersions } from "~/models/render.server";
import { forkScene } from "~/models/scene.server";
import { openShareLink } from "~/models/share.server";
import { authorize, getActor } from "~/services/permissions.server";
import { smallForm } from "~/services/body-limit.server";
import type { Route } from "./+types/s.$token";

export function meta({ data: d }: Route.MetaArgs) {
  return [{ title: d && "scene" in d ? `${d.scene.name} (shared) · Tracewell` : "Shared scene · Tracewell" }, { name: "robots", content: "noindex" }];
}

const GONE = "This link is not valid. It may have been revoked or have expired; ask whoever sent it for a new one.";

export async function loader({ request, params }: Route.LoaderArgs) {
  const share = await openShareLink(params.token);
  if (!share) throw data(GONE, { status: 404 });
  const actor = await getActor(request);
  const renders = share.link.includeRenders ? await listRendersForVersions([share.version.id]) : [];
  const targets = actor.kind === "user" ? (await listProjectsForUser(actor.user.id)).filter((p) => p.role !== "viewer").map((p) => ({ id: p.id, name: p.name })) : [];
  return {
    token: params.token,
    projectName: share.projectName,
    scene: share.scene,
    version: { number: share.version.number, message: share.version.message, authorName: share.version.authorName, createdAt: share.version.createdAt.toISOString() },
    sceneJson: share.version.scene,
    expiresAt: share.link.expiresAt?.toISOString() ?? null,
    signedIn: actor.kind === "user",
    targets,
    renders: renders.map((r) => ({
      id: r.id,
      title: r.title,
      spp: r.spp,
      seed: r.seed,
      integrator: r.integrator,
      tracerVersion: r.tracerVersion,
      accumulationHash: r.accumulationHash,
      authorName: r.authorName,
      createdAt: r.createdAt.toISOString(),
      files: [...(["png", "hdr", "pfm"] as const).filter((k) => r.files[k]), ...Object.keys(r.files.groups ?? {}).map((g) => `group-${g}`)],
    })),
  };
}

const ForkSchema = z.object({ targetProjectId: z.uuid({ message: "choose a project" }) });

export async function action({ request, params }: Route.ActionArgs) {
  const share = await openShareLink(params.token);
  if (!share) throw data(GONE, { status: 404 });
  const actor = await getActor(request);
  if (actor.kind !== "user") return redirect(`/login?next=${encodeURIComponent(`/s/${params.token}`)}`);
  const parsed = ForkSchema.safeParse(Object.fromEntries(await smallForm(request)));
  if (!parsed.success) return data({ error: "targetProjectId: choose a project" }, { status: 400 });
  const target = await authorize(actor, { projectId: parsed.data.targetProjectId }, "edit");
  if (!target.ok) return data({ error: "You can fork only into a project where you are an editor or owner." }, { status: 403 });
  const fork = await forkScene({ versionId: share.version.id, targetProjectId: target.projectId, authorId: actor.user.id, name: `${share.scene.name} (shared)` });
  if (!fork.ok) return data({ error: "The version could not be forked." }, { status: 400 });
  await copyAssetsForScene(share.link.projectId, target.projectId, fork.version.scene);
  await logActivity(target.projectId, actor.user.id, "scene.forked", { sceneId: fork.scene.id, viaShareLink: share.link.id });
  return redirect(`/projects/${target.projectId}/scenes/${fork.scene.id}/history`);
}

type Loaded = Awaited<ReturnType<typeof loader>>;

function RenderHere({ d }: { d: Loaded }) {
  const [status, setStatus] = useState<{ phase: "idle" | "running" | "done" | "error"; text: string; progress: number; matches?: boolean | null }>({ phase: "idle", text: "", progress: 0 });
  const abort = useRef<AbortController | null>(null);
  const reference = d.renders.find((r) => r.accumulationHash) ?? null;
  const settings = (d.sceneJson as { render?: { seed?: number; spp?: number } }).render ?? {};
  const run = async () => {
    abort.current = new AbortController();
    setStatus({ phase: "running", text: "Loading…", progress: 0 });
    try {
      const r = await reproduceRender({
        scene: d.sceneJson,
        seed: reference?.seed ?? settings.seed ?? 1,
        spp: reference?.spp ?? settings.spp ?? 1,
        expectedHash: reference?.accumulationHash ?? null,
        tracerVersion: reference?.tracerVersion,
        assetUrl: (sha) => `/s/${d.token}/assets/${sha}`,
        signal: abort.current.signal,
        onProgress: (e) => setStatus((s) => ({ ...s, text: `Rendering: ${e.passesDone} / ${e.spp} spp`, progress: e.passesDone / e.spp })),
      });
      const text =
        r.matches === null
          ? `Rendered ${r.passesDone} spp; accumulation hash ${r.hash}. No published render to check against.`
          : r.matches
            ? `Reproduced bit for bit: ${r.hash} matches the published render.`
            : `Not identical: this browser got ${r.hash}, the published render has ${reference?.accumulationHash}.${r.sameTracerVersion ? "" : ` (It was made with ${reference?.tracerVersion}; this browser runs ${r.tracerVersion}.)`}`;
      setStatus({ phase: "done", text, progress: 1, matches: r.matches });
      // Show the picture this browser made.
      const { renderOutputs } = await import("~/lib/render-outputs");
      const out = renderOutputs(r.accumulation, r.scene.display, ["default"]);
      const url = URL.createObjectURL(new Blob([out.png.slice().buffer as ArrayBuffer], { type: "image/png" }));
      setImage(url);
    } catch (e) {
      setStatus({ phase: "error", text: e instanceof Error ? e.message : String(e), progress: 0 });
    }
  };
  const [image, setImage] = useState<string | null>(null);
  return (
    <div className="flex flex-col gap-2">
      <div className="flex gap-2">
        <Button tone="primary" onClick={run} disabled={status.phase === "running"} data-testid="share-render">
          Render in my browser{reference ? " and check" : ""}
        </Button>
        {status.phase === "running" ? (
          <Button tone="quiet" onClick={() => abort.current?.abort()}>
            Cancel
          </Button>
        ) : null}
      </div>
      {status.phase === "running" ? <progress value={status.progress} max={1} className="w-full" /> : null}
      {status.text ? (
        <p
          data-testid="reproduce-result"
          data-matches={status.matches === undefined ? undefined : String(status.matches)}
          className={status.phase === "error" || status.matches === false ? "text-sm text-danger" : status.matches ? "text-sm text-ok" : "text-sm text-ink-muted"}
        >
          {status.text}
        </p>
      ) : null}
      {image ? <img src={image} alt="Rendered in this browser" className="max-w-full rounded border border-line" /> : null}
    </div>
  );
}

function SceneFacts({ scene }: { scene: Record<string, unknown> }) {
  const s = scene as { image?: { width?: number; height?: number }; render?: { integrator?: string; spp?: number; seed?: number }; materials?: object; objects?: { id: string }[]; lights?: { id: string }[] };
  return (
    <ul className="text-sm text-ink-muted">
      <li>
        {s.image?.width}×{s.image?.height} px · {s.render?.integrator ?? "path"} · {s.render?.spp} spp · seed {s.render?.seed ?? 1}
      </li>
      <li>Objects: {(s.objects ?? []).map((o) => o.id).join(", ") || "none"}</li>
      <li>Lights: {(s.lights ?? []).map((l) => l.id).join(", ") || "none"}</li>
      <li>Materials: {Object.keys(s.materials ?? {}).join(", ") || "none"}</li>
    </ul>
  );
}

export default function SharedScene({ loaderData, actionData }: Route.ComponentProps) {
  const d = loaderData;
  return (
    <div className="mx-auto flex max-w-5xl flex-col gap-4 p-6">
      <header>
        <p className="text-xs tracking-wide text-ink-faint uppercase">Shared from {d.projectName} · read-only</p>
        <h1 className="text-xl font-bold" data-testid="shared-scene-name">
          {d.scene.name} <span className="text-ink-muted">v{d.version.number}</span>
        </h1>
        <p className="text-sm text-ink-muted">
          “{d.version.message}” — {d.version.authorName ?? "someone"}, {new Date(d.version.createdAt).toLocaleString()}
          {d.expiresAt ? ` · link expires ${new Date(d.expiresAt).toLocaleString()}` : ""}
        </p>
      </header>
      {actionData && "error" in actionData ? <Notice tone="danger">{actionData.error}</Notice> : null}

      <Panel title="Render it yourself">
        <RenderHere d={d} />
      </Panel>

      {d.renders.length ? (
        <Panel title="Published renders">
          <div className="grid gap-3 md:grid-cols-2">
            {d.renders.map((r) => (
              <figure key={r.id} className="flex flex-col gap-1">
                <img src={`/s/${d.token}/renders/${r.id}/png`} alt={r.title || "Published render"} className="rounded border border-line" />
                <figcaption className="text-xs text-ink-muted">
                  {r.title ? `${r.title} · ` : ""}
                  {r.spp} spp · seed {r.seed} · {r.integrator} · {r.authorName ?? "—"} · <span className="font-mono">{r.accumulationHash}</span>
                  <span className="mt-1 flex gap-1">
                    {r.files.map((f) => (
                      <a key={f} href={`/s/${d.token}/renders/${r.id}/${f}?download=1`} className="rounded border border-line px-1.5" download>
                        {f}
                      </a>
                    ))}
                  </span>
                </figcaption>
              </figure>
            ))}
          </div>
        </Panel>
      ) : null}

      <Panel title="Fork into your own project">
        {d.signedIn ? (
          d.targets.length ? (
            <Form method="post" className="flex items-end gap-2">
              <Select name="targetProjectId" aria-label="Project" data-testid="share-fork-target">
                {d.targets.map((p) => (
                  <option key={p.id} value={p.id}>
                    {p.name}
                  </option>
                ))}
              </Select>
              <Button type="submit" data-testid="share-fork">
                Fork
              </Button>
            </Form>
          ) : (
            <p className="text-sm text-ink-muted">
              You are not an editor of any project. <Link to="/projects" className="text-accent underline">Create one</Link> first.
            </p>
          )
        ) : (
          <p className="text-sm text-ink-muted">
            <Link to={`/login?next=${encodeURIComponent(`/s/${d.token}`)}`} className="text-accent underline">
              Sign in
            </Link>{" "}
            to fork this scene into a project of your own.
          </p>
        )}
      </Panel>

      <Panel title="The scene">
        <SceneFacts scene={d.sceneJson} />
        <details className="mt-3 text-xs">
          <summary className="cursor-pointer text-ink-muted">Scene JSON</summary>
          <pre className="mt-2 max-h-96 overflow-auto">{JSON.stringify(d.sceneJson, null, 2)}</pre>
        </details>
      </Panel>
    </div>
  );
}

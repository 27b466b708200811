// A scene's history: every version with author, time, message and parent; open any version read-only in
// the workspace, compare two, restore one as a new head, fork any one into another project.
import { useState } from "react";
import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { VersionGraph } from "~/components/scene/version-graph";
import { Button, buttonClass, Field, Input, Notice, Panel, Select, Table, Td, Th, IntentButton } from "~/components/ui";
import { copyAssetsForScene } from "~/models/asset.server";
import { logActivity } from "~/models/activity.server";
import { listProjectsForUser } from "~/models/project.server";
import { forkScene, getForkOrigin, getScene, getVersion, listForks, listVersions, restoreVersion } from "~/models/scene.server";
import { authorize } from "~/services/permissions.server";
import { notFound, requireInProject } from "~/services/project-access.server";
import { smallForm } from "~/services/body-limit.server";
import type { Route } from "./+types/projects.$projectId.scenes.$sceneId.history";

export function meta({ data: d }: Route.MetaArgs) {
  return [{ title: d ? `History · ${d.scene.name} · Tracewell` : "History · Tracewell" }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireInProject(request, params.projectId, { sceneId: params.sceneId }, "view");
  const scene = await getScene(params.sceneId);
  if (!scene) notFound();
  const [versions, origin, forks] = await Promise.all([listVersions(scene.id), getForkOrigin(scene), listForks(scene.id)]);
  const actor = access.actor;

  // The origin and the forks may live in projects this person cannot see: name them only when visible.
  const originVisible = origin ? (await authorize(actor, { sceneId: origin.scene.id }, "view")).ok : false;
  const visibleForks = [];
  for (const f of forks) {
    const ok = (await authorize(actor, { sceneId: f.scene.id }, "view")).ok;
    visibleForks.push({
      label: ok ? `${f.projectName} / ${f.scene.name}` : "a fork in another project",
      href: ok ? `/projects/${f.scene.projectId}/scenes/${f.scene.id}/history` : null,
      versionId: f.fromVersionId,
    });
  }
  const forkTargets =
    actor.kind === "user" ? (await listProjectsForUser(actor.user.id)).filter((p) => p.role === "owner" || p.role === "editor").map((p) => ({ id: p.id, name: p.name })) : [];

  return {
    projectId: params.projectId,
    scene: { id: scene.id, name: scene.name, headVersionId: scene.headVersionId },
    canEdit: access.role !== "viewer",
    versions: versions.map((v) => ({
      id: v.id,
      number: v.number,
      parentId: v.parentId,
      kind: v.kind,
      sourceVersionId: v.sourceVersionId,
      message: v.message,
      authorName: v.authorName,
      createdAt: v.createdAt.toISOString(),
    })),
    origin: origin
      ? {
          label: originVisible ? `${origin.projectName} / ${origin.scene.name} v${origin.version.number}` : "a scene in another project",
          href: originVisible ? `/projects/${origin.scene.projectId}/scenes/${origin.scene.id}/history` : null,
          versionId: origin.version.id,
          visible: originVisible,
        }
      : null,
    forks: visibleForks,
    forkTargets,
  };
}

const ActionSchema = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("restore"), versionId: z.uuid(), headId: z.uuid(), message: z.string().max(500).default("") }),
  z.object({
    intent: z.literal("fork"),
    versionId: z.uuid(),
    targetProjectId: z.uuid({ message: "choose a project" }),
    name: z.string().trim().max(200).default(""),
  }),
]);

export async function action({ request, params }: Route.ActionArgs) {
  const access = await requireInProject(request, params.projectId, { sceneId: params.sceneId }, "view");
  const parsed = ActionSchema.safeParse(Object.fromEntries(await smallForm(request)));
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    return data({ error: `${issue?.path.join(".") || "form"}: ${issue?.message}` }, { status: 400 });
  }
  const input = parsed.data;
  const userId = access.actor.user.id;

  if (input.intent === "restore") {
    if (access.role === "viewer") notFound();
    const result = await restoreVersion({ sceneId: params.sceneId, versionId: input.versionId, parentVersionId: input.headId, authorId: userId, message: input.message });
    if (!result.ok) {
      if (result.reason === "conflict") {
        return data({ error: `Someone saved version ${result.head.number} (“${result.head.message}”) while you were looking. Review it, then restore again.` }, { status: 409 });
      }
      return data({ error: result.reason === "invalid" ? "That version no longer validates" : "No such version" }, { status: 400 });
    }
    await logActivity(params.projectId, userId, "scene.restored", { sceneId: params.sceneId, versionId: result.version.id, from: input.versionId });
    return { ok: `Restored as version ${result.version.number}.` };
  }

  // Fork: only versions of this scene (the one whose access was checked); reading it is enough, the target
  // project needs "edit".
  const source = await getVersion(input.versionId);
  if (!source || source.sceneId !== params.sceneId) notFound();
  const target = await authorize(access.actor, { projectId: input.targetProjectId }, "edit");
  if (!target.ok) return data({ error: "You can fork only into a project where you are an editor or owner." }, { status: 403 });
  const fork = await forkScene({ versionId: input.versionId, targetProjectId: input.targetProjectId, authorId: userId, name: input.name });
  if (!fork.ok) return data({ error: "That version could not be forked." }, { status: 400 });
  await copyAssetsForScene(params.projectId, input.targetProjectId, fork.version.scene);
  await logActivity(input.targetProjectId, userId, "scene.forked", { sceneId: fork.scene.id, fromVersionId: input.versionId });
  return redirect(`/projects/${input.targetProjectId}/scenes/${fork.scene.id}/history`);
}

function when(iso: string): string {
  return new Date(iso).toLocaleString(undefined, { dateStyle: "medium", timeStyle: "short" });
}

const KIND_LABEL: Record<string, string> = { create: "created", save: "saved", restore: "restore", fork: "fork", import: "import" };

export default function SceneHistory({ loaderData, actionData }: Route.ComponentProps) {
  const { projectId, scene, versions, origin, forks, forkTargets, canEdit } = loaderData;
  const navigation = useNavigation();
  const busy = navigation.state !== "idle";
  const head = scene.headVersionId;
  const [a, setA] = useState<string>(versions[1]?.id ?? versions[0]?.id ?? "");
  const [b, setB] = useState<string>(versions[0]?.id ?? "");
  const [forkAt, setForkAt] = useState<string | null>(null);
  const byId = new Map(versions.map((v) => [v.id, v]));
  const base = `/projects/${projectId}/scenes/${scene.id}`;

  return (
    <div className="flex flex-col gap-4 p-6">
      <header className="flex flex-wrap items-center gap-3">
        <h2 className="text-lg font-medium">{scene.name}</h2>
        <span className="text-sm text-ink-muted">history · {versions.length} version{versions.length === 1 ? "" : "s"}</span>
        <div className="ml-auto flex gap-2">
          <Link className={buttonClass("secondary", "sm")} to={base}>
            Open in workspace
          </Link>
          {origin?.visible ? (
            <Link className={buttonClass("secondary", "sm")} to={`${base}/compare?a=${origin.versionId}&b=${head ?? ""}`}>
              Compare with origin
            </Link>
          ) : null}
        </div>
      </header>

      {origin ? (
        <Notice>
          Forked from{" "}
          {origin.href ? (
            <Link className="text-accent underline" to={origin.href} data-testid="fork-origin">
              {origin.label}
            </Link>
          ) : (
            <span data-testid="fork-origin">{origin.label}</span>
          )}
          .
        </Notice>
      ) : null}
      {actionData && "error" in actionData ? <Notice tone="danger">{actionData.error}</Notice> : null}
      {actionData && "ok" in actionData ? <Notice tone="ok">{actionData.ok}</Notice> : null}

      <Panel title="Version graph">
        <VersionGraph versions={versions} headId={head} origin={origin} forks={forks} versionHref={(v) => `${base}?version=${v.id}`} />
      </Panel>

      <Panel
        title="Versions"
        actions={
          <Link className={buttonClass("primary", "sm")} to={`${base}/compare?a=${a}&b=${b}`} aria-disabled={!a || !b} data-testid="compare-versions">
            Compare {byId.get(a) ? `v${byId.get(a)!.number}` : "…"} → {byId.get(b) ? `v${byId.get(b)!.number}` : "…"}
          </Link>
        }
      >
        <Table>
          <thead>
            <tr>
              <Th title="Compare from">A</Th>
              <Th title="Compare to">B</Th>
              <Th>Version</Th>
              <Th>Message</Th>
              <Th>Author</Th>
              <Th>When</Th>
              <Th>Parent</Th>
              <Th>
                <span className="sr-only">Actions</span>
              </Th>
            </tr>
          </thead>
          <tbody>
            {versions.map((v) => {
              const parent = v.parentId ? byId.get(v.parentId) : null;
              const source = v.sourceVersionId ? byId.get(v.sourceVersionId) : null;
              return (
                <tr key={v.id} data-testid="version-row">
                  <Td>
                    <input type="radio" name="a" aria-label={`Compare from version ${v.number}`} checked={a === v.id} onChange={() => setA(v.id)} />
                  </Td>
                  <Td>
                    <input type="radio" name="b" aria-label={`Compare to version ${v.number}`} checked={b === v.id} onChange={() => setB(v.id)} />
                  </Td>
                  <Td className="whitespace-nowrap">
                    <span className="font-medium">v{v.number}</span>{" "}
                    <span className="text-xs text-ink-faint">{KIND_LABEL[v.kind] ?? v.kind}</span>
                    {v.id === head ? <span className="ml-1 rounded bg-accent px-1 text-xs text-accent-ink">head</span> : null}
                  </Td>
                  <Td>
                    {v.message}
                    {source ? <span className="text-xs text-ink-faint"> (content of v{source.number})</span> : null}
                  </Td>
                  <Td>{v.authorName ?? "—"}</Td>
                  <Td className="whitespace-nowrap text-ink-muted">
                    <time dateTime={v.createdAt}>{when(v.createdAt)}</time>
                  </Td>
                  <Td>{parent ? `v${parent.number}` : v.kind === "fork" || v.kind === "import" ? v.kind : "—"}</Td>
                  <Td className="whitespace-nowrap">
                    <div className="flex gap-1">
                      <Link className={buttonClass("quiet", "sm")} to={`${base}?version=${v.id}`}>
                        Open
                      </Link>
                      <a className={buttonClass("quiet", "sm")} href={`${base}/versions/${v.id}/bundle`} download title="Download this version with its assets as one file">
                        Bundle
                      </a>
                      {canEdit && v.id !== head && head ? (
                        <IntentButton intent="restore" fields={{ versionId: v.id, headId: head }} tone="quiet" disabled={busy}>
                          Restore
                        </IntentButton>
                      ) : null}
                      {forkTargets.length ? (
                        <Button size="sm" tone="quiet" onClick={() => setForkAt(forkAt === v.id ? null : v.id)} aria-expanded={forkAt === v.id}>
                          Fork…
                        </Button>
                      ) : null}
                    </div>
                    {forkAt === v.id ? (
                      <Form method="post" className="mt-2 flex flex-col gap-2 rounded border border-line p-2" data-testid="fork-form">
                        <input type="hidden" name="intent" value="fork" />
                        <input type="hidden" name="versionId" value={v.id} />
                        <Field label="Into project">
                          {(f) => (
                            <Select {...f} name="targetProjectId" defaultValue={projectId}>
                              {forkTargets.map((p) => (
                                <option key={p.id} value={p.id}>
                                  {p.name}
                                </option>
                              ))}
                            </Select>
                          )}
                        </Field>
                        <Field label="Name of the fork">{(f) => <Input {...f} name="name" defaultValue={`${scene.name} (fork of v${v.number})`} />}</Field>
                        <Button type="submit" tone="primary" size="sm" disabled={busy}>
                          Fork version {v.number}
                        </Button>
                      </Form>
                    ) : null}
                  </Td>
                </tr>
              );
            })}
          </tbody>
        </Table>
      </Panel>
    </div>
  );
}

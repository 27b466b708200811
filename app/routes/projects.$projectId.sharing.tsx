// The Sharing tab: read-only links to a scene version for people outside the project (revocable, optionally
// expiring), and scene bundles: import a bundle exported from another project or installation.
import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { Button, buttonClass, Notice, Panel, Select, Table, Td, Th, toast, IntentButton } from "~/components/ui";
import { logActivity } from "~/models/activity.server";
import { importBundle } from "~/models/bundle.server";
import { listScenes, listVersions } from "~/models/scene.server";
import { createShareLink, listShareLinks, revokeShareLink, shareLinkState } from "~/models/share.server";
import { requireAccess } from "~/services/permissions.server";
import { formDataLimited } from "~/services/body-limit.server";
import type { Route } from "./+types/projects.$projectId.sharing";

/** A bundle carries its assets base64-encoded (4/3 of their size). */
const MAX_BUNDLE_BYTES = 256 * 1024 * 1024;

export function meta() {
  return [{ title: "Sharing · Tracewell" }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireAccess(request, { projectId: params.projectId }, "view");
  const canShare = access.role !== "viewer";
  const scenes = await listScenes(access.projectId);
  const versions = canShare
    ? await Promise.all(scenes.map(async (s) => ({ id: s.id, name: s.name, versions: (await listVersions(s.id)).map((v) => ({ id: v.id, number: v.number, message: v.message })) })))
    : [];
  const links = canShare ? await listShareLinks(access.projectId) : [];
  return {
    projectId: access.projectId,
    canShare,
    canImport: access.role !== "viewer",
    scenes: versions,
    links: links.map((l) => ({
      id: l.id,
      token: l.token,
      label: l.label,
      sceneName: l.sceneName,
      sceneId: l.sceneId,
      versionNumber: l.versionNumber,
      creatorName: l.creatorName,
      createdAt: l.createdAt.toISOString(),
      expiresAt: l.expiresAt?.toISOString() ?? null,
      includeRenders: l.includeRenders,
      state: shareLinkState(l),
    })),
  };
}

const ActionSchema = z.discriminatedUnion("intent", [
  z.object({
    intent: z.literal("create"),
    versionId: z.uuid({ message: "choose a version" }),
    label: z.string().max(200).default(""),
    expiresInDays: z.enum(["", "1", "7", "30", "90"]).default(""),
    includeRenders: z.literal("on").optional(),
  }),
  z.object({ intent: z.literal("revoke"), linkId: z.uuid() }),
  z.object({ intent: z.literal("import") }),
]);

export async function action({ request, params }: Route.ActionArgs) {
  const form = await formDataLimited(request, MAX_BUNDLE_BYTES).catch(() => null);
  if (!form) return data({ error: `bundle: the file must be at most ${MAX_BUNDLE_BYTES} bytes` }, { status: 413 });
  const entries = Object.fromEntries([...form.entries()].filter(([, v]) => typeof v === "string"));
  const parsed = ActionSchema.safeParse(entries);
  if (!parsed.success) {
    const i = parsed.error.issues[0]!;
    return data({ error: `${i.path.join(".") || "form"}: ${i.message}` }, { status: 400 });
  }
  const input = parsed.data;
  if (input.intent === "import") {
    const access = await requireAccess(request, { projectId: params.projectId }, "edit");
    const file = form.get("bundle");
    if (!file || typeof file === "string" || file.size === 0) return data({ error: "bundle: choose a bundle file (.tracewell.json)" }, { status: 400 });
    const result = await importBundle({ projectId: access.projectId, text: await file.text(), authorId: access.actor.user.id });
    if (!result.ok) {
      return data({ error: result.reason === "bundle" ? result.message : result.issues.map((i) => `${i.path}: ${i.message}`).join("; ") }, { status: 400 });
    }
    await logActivity(access.projectId, access.actor.user.id, "scene.imported", { sceneId: result.scene.id });
    return redirect(`/projects/${access.projectId}/scenes/${result.scene.id}/history`);
  }
  const access = await requireAccess(request, { projectId: params.projectId }, "publish");
  if (input.intent === "revoke") {
    const ok = await revokeShareLink(access.projectId, input.linkId);
    if (!ok) return data({ error: "No such link" }, { status: 404 });
    await logActivity(access.projectId, access.actor.user.id, "share.revoked", { linkId: input.linkId });
    return { ok: "Link revoked. Anyone opening it now sees that it is no longer valid." };
  }
  const days = input.expiresInDays ? Number(input.expiresInDays) : null;
  const link = await createShareLink({
    projectId: access.projectId,
    versionId: input.versionId,
    label: input.label,
    expiresAt: days ? new Date(Date.now() + days * 86_400_000) : null,
    includeRenders: input.includeRenders === "on",
    createdBy: access.actor.user.id,
  });
  if (!link) return data({ error: "versionId: not a version of this project" }, { status: 400 });
  await logActivity(access.projectId, access.actor.user.id, "share.created", { linkId: link.id, versionId: input.versionId });
  return { ok: "Link created.", token: link.token };
}

export default function Sharing({ loaderData, actionData }: Route.ComponentProps) {
  const { scenes, links, canShare, canImport } = loaderData;
  const busy = useNavigation().state !== "idle";
  const origin = typeof window === "undefined" ? "" : window.location.origin;
  const copy = (token: string) => void navigator.clipboard?.writeText(`${origin}/s/${token}`).then(() => toast("Link copied"));

  return (
    <div className="flex flex-col gap-4 p-6">
      {actionData && "error" in actionData ? <Notice tone="danger">{actionData.error}</Notice> : null}
      {actionData && "ok" in actionData ? (
        <Notice tone="ok">
          {actionData.ok}{" "}
          {"token" in actionData && actionData.token ? (
            <Link to={`/s/${actionData.token}`} className="underline" data-testid="new-share-link">
              Open it
            </Link>
          ) : null}
        </Notice>
      ) : null}

      {canShare ? (
        <Panel title="Share a version">
          {scenes.length === 0 ? (
            <p className="text-sm text-ink-muted">No scenes to share yet.</p>
          ) : (
            <Form method="post" className="flex flex-wrap items-end gap-3">
              <input type="hidden" name="intent" value="create" />
              <label className="flex flex-col gap-1 text-xs text-ink-muted">
                Version
                <Select name="versionId" required data-testid="share-version">
                  {scenes.map((s) => (
                    <optgroup key={s.id} label={s.name}>
                      {s.versions.map((v) => (
                        <option key={v.id} value={v.id}>
                          {s.name} v{v.number} — {v.message}
                        </option>
                      ))}
                    </optgroup>
                  ))}
                </Select>
              </label>
              <label className="flex flex-col gap-1 text-xs text-ink-muted">
                Label (who it is for)
                <input name="label" className="h-9 rounded border border-line bg-raised px-2 text-sm text-ink" placeholder="e.g. lighting class, week 3" />
              </label>
              <label className="flex flex-col gap-1 text-xs text-ink-muted">
                Expires
                <Select name="expiresInDays" defaultValue="">
                  <option value="">Never (until revoked)</option>
                  <option value="1">In 1 day</option>
                  <option value="7">In 7 days</option>
                  <option value="30">In 30 days</option>
                  <option value="90">In 90 days</option>
                </Select>
              </label>
              <label className="flex items-center gap-2 text-sm">
                <input type="checkbox" name="includeRenders" defaultChecked /> Include its published renders
              </label>
              <Button type="submit" tone="primary" disabled={busy}>
                Create link
              </Button>
            </Form>
          )}
        </Panel>
      ) : (
        <Notice>Owners and editors create share links.</Notice>
      )}

      {canShare ? (
        <Panel title="Links of this project">
          {links.length === 0 ? (
            <p className="text-sm text-ink-muted">No links yet.</p>
          ) : (
            <Table>
              <thead>
                <tr>
                  <Th>Version</Th>
                  <Th>Label</Th>
                  <Th>Created</Th>
                  <Th>Expires</Th>
                  <Th>State</Th>
                  <Th>
                    <span className="sr-only">Actions</span>
                  </Th>
                </tr>
              </thead>
              <tbody>
                {links.map((l) => (
                  <tr key={l.id} data-testid="share-row">
                    <Td>
                      {l.sceneName} v{l.versionNumber}
                      {l.includeRenders ? <span className="block text-xs text-ink-faint">with renders</span> : null}
                    </Td>
                    <Td>{l.label || "—"}</Td>
                    <Td className="text-ink-muted">
                      {new Date(l.createdAt).toLocaleDateString()} by {l.creatorName ?? "—"}
                    </Td>
                    <Td className="text-ink-muted">{l.expiresAt ? new Date(l.expiresAt).toLocaleString() : "never"}</Td>
                    <Td className={l.state === "active" ? "text-ok" : "text-ink-faint"}>{l.state}</Td>
                    <Td className="whitespace-nowrap">
                      {l.state === "active" ? (
                        <div className="flex gap-1">
                          <Button size="sm" tone="quiet" onClick={() => copy(l.token)}>
                            Copy link
                          </Button>
                          <Link className={buttonClass("quiet", "sm")} to={`/s/${l.token}`}>
                            Open
                          </Link>
                          <IntentButton intent="revoke" fields={{ linkId: l.id }} tone="danger" disabled={busy}>
                            Revoke
                          </IntentButton>
                        </div>
                      ) : null}
                    </Td>
                  </tr>
                ))}
              </tbody>
            </Table>
          )}
        </Panel>
      ) : null}

      {canImport ? (
        <Panel title="Import a scene bundle">
          <Form method="post" encType="multipart/form-data" className="flex flex-wrap items-end gap-3">
            <input type="hidden" name="intent" value="import" />
            <input type="file" name="bundle" accept=".json,application/json" className="text-sm" data-testid="bundle-input" />
            <Button type="submit" disabled={busy}>
              Import
            </Button>
          </Form>
          <p className="mt-2 text-xs text-ink-faint">
            A bundle holds one version's scene and every asset it uses; export one from a scene's history page. The imported scene renders to the same accumulation hash.
          </p>
        </Panel>
      ) : null}
    </div>
  );
}

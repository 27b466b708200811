// The Assets tab: drop OBJ meshes and Radiance .hdr maps to upload them (checked in the browser first, then
// again on the server), see each asset's facts, copy its sha256 reference, delete what no version uses.
import { useCallback, useState } from "react";
import { useDropzone } from "react-dropzone";
import { data, Form, useNavigation, useRevalidator } from "react-router";
import { z } from "zod";
import { Button, Notice, Table, Td, Th, toast } from "~/components/ui";
import { assetKindForName, inspectAsset, MAX_ASSET_BYTES } from "~/lib/asset-inspect";
import { stagedUpload } from "~/lib/upload.client";
import { logActivity } from "~/models/activity.server";
import { AssetError, assetRef, deleteAsset, listAssets } from "~/models/asset.server";
import { requireAccess } from "~/services/permissions.server";
import { smallForm } from "~/services/body-limit.server";
import type { Route } from "./+types/projects.$projectId.assets._index";

export function meta() {
  return [{ title: "Assets · Tracewell" }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireAccess(request, { projectId: params.projectId }, "view");
  const list = await listAssets(access.projectId);
  return {
    projectId: access.projectId,
    canUpload: access.role !== "viewer",
    assets: list.map((a) => ({
      sha256: a.sha256,
      ref: assetRef(a.sha256),
      name: a.name,
      kind: a.kind,
      bytes: a.bytes,
      facts: a.facts,
      uploaderName: a.uploaderName,
      createdAt: a.createdAt.toISOString(),
      usedByVersions: a.usedByVersions,
    })),
  };
}

const DeleteSchema = z.object({ intent: z.literal("delete"), sha256: z.string().regex(/^[0-9a-f]{64}$/) });

export async function action({ request, params }: Route.ActionArgs) {
  const access = await requireAccess(request, { projectId: params.projectId }, "upload");
  const parsed = DeleteSchema.safeParse(Object.fromEntries(await smallForm(request)));
  if (!parsed.success) return data({ error: "sha256: not an asset hash" }, { status: 400 });
  try {
    await deleteAsset(access.projectId, parsed.data.sha256);
  } catch (e) {
    if (e instanceof AssetError) return data({ error: e.message }, { status: e.status });
    throw e;
  }
  await logActivity(access.projectId, access.actor.user.id, "asset.deleted", { sha256: parsed.data.sha256 });
  return { ok: "Asset deleted." };
}

type Upload = {
  id: number;
  name: string;
  size: number;
  sent: number;
  progress: number;
  status: "checking" | "uploading" | "finishing" | "done" | "error";
  message: string;
  cancel?: () => void;
};

function bytesText(n: number): string {
  return n < 1024 ? `${n} B` : n < 1024 * 1024 ? `${(n / 1024).toFixed(1)} KB` : `${(n / 1024 / 1024).toFixed(1)} MB`;
}

function num(v: unknown): string {
  return typeof v === "number" ? (Number.isInteger(v) ? String(v) : v.toPrecision(4)) : "?";
}

function Facts({ kind, facts }: { kind: string; facts: Record<string, unknown> }) {
  if (kind === "mesh") {
    const b = facts.bounds as { min?: number[]; max?: number[] } | undefined;
    return (
      <span>
        {num(facts.triangles)} triangles · {num(facts.vertices)} vertices{facts.hasNormals ? " · normals" : ""}
        {b?.min && b.max ? (
          <span className="block text-xs text-ink-faint">
            bounds [{b.min.map(num).join(", ")}] – [{b.max.map(num).join(", ")}]
          </span>
        ) : null}
      </span>
    );
  }
  return (
    <span>
      {num(facts.width)}×{num(facts.height)} px
      <span className="block text-xs text-ink-faint">
        peak {num(facts.maxRadiance)} · mean luminance {num(facts.meanLuminance)}
      </span>
    </span>
  );
}

let nextId = 1;

export default function Assets({ loaderData, actionData }: Route.ComponentProps) {
  const { projectId, assets, canUpload } = loaderData;
  const [uploads, setUploads] = useState<Upload[]>([]);
  const revalidator = useRevalidator();
  const navigation = useNavigation();
  const update = (id: number, patch: Partial<Upload>) => setUploads((u) => u.map((x) => (x.id === id ? { ...x, ...patch } : x)));

  const uploadOne = useCallback(
    async (file: File) => {
      const id = nextId++;
      setUploads((u) => [{ id, name: file.name, size: file.size, sent: 0, progress: 0, status: "checking", message: "Checking…" }, ...u]);
      if (!assetKindForName(file.name)) return update(id, { status: "error", message: `${file.name}: only .obj meshes and .hdr maps can be uploaded` });
      if (file.size > MAX_ASSET_BYTES) return update(id, { status: "error", message: `${file.name}: ${file.size} bytes is more than the ${MAX_ASSET_BYTES}-byte limit` });
      const bytes = new Uint8Array(await file.arrayBuffer());
      // The same readers the renderer uses: a broken file is reported here, with its line or byte, before uploading.
      const check = inspectAsset(file.name, bytes);
      if (!check.ok) return update(id, { status: "error", message: check.message });
      // Staged: the server checks the size first, the bytes stream (with progress) and the asset appears only
      // once the server has re-checked them; cancelling or a failure leaves nothing behind.
      const ctrl = new AbortController();
      update(id, { status: "uploading", message: "Uploading…", cancel: () => ctrl.abort() });
      const result = await stagedUpload(projectId, { kind: "asset", name: file.name }, [{ slot: "file", name: file.name, body: bytes }], {
        describe: ([d]) => ({ bytes: d!.bytes, sha256: d!.sha256 }),
        signal: ctrl.signal,
        onProgress: (p) =>
          p.phase === "hashing"
            ? update(id, { message: "Computing its SHA-256…" })
            : update(id, {
                status: p.phase === "finishing" ? "finishing" : "uploading",
                sent: p.loaded,
                progress: p.fraction,
                message: p.phase === "finishing" ? "Checking the stored file…" : `Uploading… ${bytesText(p.loaded)} of ${bytesText(p.total)}`,
              }),
      });
      if (result.ok) {
        const asset = result.body.asset as { ref: string } | undefined;
        const created = result.body.created === true;
        update(id, { status: "done", progress: 1, sent: file.size, cancel: undefined, message: created ? `Stored as ${asset?.ref}` : `Already stored as ${asset?.ref}` });
        revalidator.revalidate();
      } else update(id, { status: "error", cancel: undefined, message: result.error });
    },
    [projectId, revalidator],
  );

  const onDrop = useCallback((files: File[]) => files.forEach((f) => void uploadOne(f)), [uploadOne]);
  const { getRootProps, getInputProps, isDragActive } = useDropzone({ onDrop, disabled: !canUpload, multiple: true });

  return (
    <div className="flex flex-col gap-4 p-6">
      {canUpload ? (
        <div
          {...getRootProps()}
          className={`cursor-pointer rounded border-2 border-dashed p-6 text-center text-sm ${isDragActive ? "border-accent bg-accent/10" : "border-line text-ink-muted"}`}
          data-testid="asset-dropzone"
        >
          <input {...getInputProps()} data-testid="asset-input" />
          <p>Drop Wavefront .obj meshes or Radiance .hdr maps here, or click to choose files.</p>
          <p className="text-xs text-ink-faint">Up to {bytesText(MAX_ASSET_BYTES)} each. Each file is stored once, by its SHA-256, and referenced as sha256:… in scenes.</p>
        </div>
      ) : (
        <Notice>Viewers can use assets but not upload them.</Notice>
      )}

      {uploads.length ? (
        <ul className="flex flex-col gap-1" aria-label="Uploads">
          {uploads.map((u) => (
            <li key={u.id} className="rounded border border-line px-3 py-2 text-sm" data-testid="upload-item" data-status={u.status} data-sent={u.sent} data-size={u.size}>
              <div className="flex items-center gap-2">
                <span className="font-medium">{u.name}</span>
                <span className="text-xs text-ink-faint">{bytesText(u.size)}</span>
                {u.status === "uploading" || u.status === "finishing" || u.status === "done" ? (
                  <progress className="ml-auto w-40" value={u.progress} max={1} aria-label={`${u.name} upload progress`} data-testid="upload-progress" />
                ) : null}
                {u.cancel && u.status === "uploading" ? (
                  <Button size="sm" tone="quiet" onClick={u.cancel} data-testid="upload-cancel">
                    Cancel
                  </Button>
                ) : null}
              </div>
              <p className={u.status === "error" ? "text-danger" : u.status === "done" ? "text-ok" : "text-ink-muted"}>{u.message}</p>
            </li>
          ))}
        </ul>
      ) : null}

      {actionData && "error" in actionData ? <Notice tone="danger">{actionData.error}</Notice> : null}
      {actionData && "ok" in actionData ? <Notice tone="ok">{actionData.ok}</Notice> : null}

      {assets.length === 0 ? (
        <Notice>No assets yet.</Notice>
      ) : (
        <Table>
          <thead>
            <tr>
              <Th>
                <span className="sr-only">Preview</span>
              </Th>
              <Th>Name</Th>
              <Th>Kind</Th>
              <Th>Facts</Th>
              <Th>Size</Th>
              <Th>Reference</Th>
              <Th>Used by</Th>
              <Th>
                <span className="sr-only">Actions</span>
              </Th>
            </tr>
          </thead>
          <tbody>
            {assets.map((a) => (
              <tr key={a.sha256} data-testid="asset-row">
                <Td>
                  {a.kind === "envmap" ? (
                    <img src={`/projects/${projectId}/assets/${a.sha256}?thumb`} alt="" className="h-10 w-20 rounded border border-line object-cover" loading="lazy" />
                  ) : (
                    <span className="text-xs text-ink-faint">mesh</span>
                  )}
                </Td>
                <Td>
                  {a.name}
                  <div className="text-xs text-ink-faint">
                    {a.uploaderName ?? "—"}, {new Date(a.createdAt).toLocaleDateString()}
                  </div>
                </Td>
                <Td>{a.kind === "mesh" ? "OBJ mesh" : "HDR map"}</Td>
                <Td>
                  <Facts kind={a.kind} facts={a.facts} />
                </Td>
                <Td className="whitespace-nowrap">{bytesText(a.bytes)}</Td>
                <Td>
                  <button
                    type="button"
                    className="font-mono text-xs text-accent hover:underline"
                    title="Copy the reference"
                    onClick={() => void navigator.clipboard?.writeText(a.ref).then(() => toast("Reference copied"))}
                  >
                    {a.ref.slice(0, 19)}…
                  </button>
                </Td>
                <Td>{a.usedByVersions ? `${a.usedByVersions} version${a.usedByVersions === 1 ? "" : "s"}` : "—"}</Td>
                <Td className="whitespace-nowrap">
                  <a className="text-xs text-ink-muted hover:text-ink" href={`/projects/${projectId}/assets/${a.sha256}`} download>
                    Download
                  </a>
                  {canUpload ? (
                    <Form method="post" className="inline">
                      <input type="hidden" name="intent" value="delete" />
                      <input type="hidden" name="sha256" value={a.sha256} />
                      <Button
                        type="submit"
                        size="sm"
                        tone="quiet"
                        disabled={a.usedByVersions > 0 || navigation.state !== "idle"}
                        title={a.usedByVersions > 0 ? "A saved version uses this asset" : "Delete"}
                      >
                        Delete
                      </Button>
                    </Form>
                  ) : null}
                </Td>
              </tr>
            ))}
          </tbody>
        </Table>
      )}
    </div>
  );
}

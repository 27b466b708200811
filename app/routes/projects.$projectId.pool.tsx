// The project's server render pool: queue a render of a scene's head, watch pool renders progress chunk by
// chunk while workers take them, cancel one, and fetch the files of finished ones.
import { useEffect } from "react";
import { data, Form, Link, useNavigation, useRevalidator } from "react-router";
import { z } from "zod";
import { Button, Field, Input, Notice, Panel, Select, Table, Td, Th, IntentButton } from "~/components/ui";
import { cancelPoolRender, getPoolRender, listPoolRenders } from "~/models/render-job.server";
import { listScenes } from "~/models/scene.server";
import { ApiError } from "~/services/api.server";
import { db } from "~/services/db.server";
import { requireAccess, roleAllows } from "~/services/permissions.server";
import { submitPoolRender } from "~/services/pool-submit.server";
import type { Route } from "./+types/projects.$projectId.pool";
import { smallForm } from "~/services/body-limit.server";

export const meta: Route.MetaFunction = () => [{ title: "Render pool · Tracewell" }];

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireAccess(request, { projectId: params.projectId }, "view");
  const [rows, scenes] = await Promise.all([listPoolRenders(db(), access.projectId), listScenes(access.projectId)]);
  return {
    projectId: access.projectId,
    canRender: roleAllows(access.role, "render"),
    scenes: scenes.filter((s) => s.headVersionId).map((s) => ({ id: s.id, name: s.name, headNumber: s.headNumber })),
    renders: rows.map((r) => ({
      id: r.id,
      sceneName: r.sceneName,
      status: r.status,
      spp: r.spp,
      sppDone: r.sppDone,
      size: `${r.width}×${r.height}`,
      seed: r.seed,
      continued: r.continuedFromId !== null,
      hash: r.accumulationHash,
      error: r.error,
      createdAt: r.createdAt.toISOString(),
      chunks: r.chunks.map((c) => ({ index: c.index, passes: `${c.passStart}–${c.passEnd - 1}`, status: c.status, worker: c.worker, attempts: c.attempts })),
    })),
  };
}

const optionalInt = (min: number, max: number) =>
  z.preprocess((v) => (v === "" || v === undefined ? undefined : Number(v)), z.number().int("must be a whole number").min(min, `must be at least ${min}`).max(max, `must be at most ${max}`).optional());

const QueueFormSchema = z.object({
  sceneId: z.uuid("choose a scene"),
  spp: z.preprocess((v) => Number(v), z.number().int("must be a whole number").min(1, "must be at least 1").max(65536, "must be at most 65536")),
  width: optionalInt(1, 8192),
  height: optionalInt(1, 8192),
  seed: optionalInt(0, 4294967295),
  chunkPasses: optionalInt(1, 65536),
});

export async function action({ request, params }: Route.ActionArgs) {
  const form = await smallForm(request);
  const intent = form.get("intent");
  if (intent === "cancel") {
    const renderId = String(form.get("renderId") ?? "");
    const access = await requireAccess(request, { renderId }, "render");
    const render = await getPoolRender(db(), renderId);
    if (!render || access.projectId !== params.projectId) throw data("Not found", { status: 404 });
    const cancelled = await cancelPoolRender(db(), renderId);
    return { ok: cancelled ? "Cancelled; workers stop its chunks within a second." : `That render had already ${render.status === "done" ? "finished" : "stopped"}.`, errors: {} };
  }
  const access = await requireAccess(request, { projectId: params.projectId }, "render");
  const raw = Object.fromEntries([...form.entries()].map(([k, v]) => [k, typeof v === "string" ? v : ""]));
  const parsed = QueueFormSchema.safeParse(raw);
  if (!parsed.success) {
    const errors: Record<string, string> = {};
    for (const i of parsed.error.issues) errors[String(i.path[0] ?? "form")] ??= i.message;
    return data({ ok: null, errors }, { status: 400 });
  }
  const scene = (await listScenes(access.projectId)).find((s) => s.id === parsed.data.sceneId);
  if (!scene?.headVersionId) return data({ ok: null, errors: { sceneId: "choose a scene of this project" } }, { status: 400 });
  try {
    const { sceneId: _scene, ...rest } = parsed.data;
    await submitPoolRender(access.actor, { ...rest, versionId: scene.headVersionId });
    return { ok: `Queued ${parsed.data.spp} spp of ${scene.name} (version ${scene.headNumber}).`, errors: {} };
  } catch (err) {
    if (err instanceof ApiError) return data({ ok: null, errors: { [err.path ?? "form"]: err.message } }, { status: err.status });
    throw err;
  }
}

const STATUS_TONE: Record<string, string> = {
  pending: "bg-raised",
  running: "bg-accent animate-pulse",
  done: "bg-ok",
  failed: "bg-danger",
  cancelled: "bg-ink-faint",
};

export default function Pool({ loaderData, actionData }: Route.ComponentProps) {
  const revalidator = useRevalidator();
  const busy = useNavigation().state === "submitting";
  const active = loaderData.renders.some((r) => r.status === "queued" || r.status === "running");
  const errors: Record<string, string | undefined> = actionData?.errors ?? {};

  // Progress comes from the workers through the database; refresh while anything is in flight.
  useEffect(() => {
    if (!active) return;
    const t = setInterval(() => {
      if (revalidator.state === "idle") void revalidator.revalidate();
    }, 1500);
    return () => clearInterval(t);
  }, [active, revalidator]);

  return (
    <div className="flex flex-col gap-6">
      {actionData?.ok ? <Notice tone="ok">{actionData.ok}</Notice> : null}
      {errors.form ? <Notice tone="danger">{errors.form}</Notice> : null}
      {loaderData.canRender ? (
        <Panel title="Queue a render on the server pool">
          <Form method="post" className="grid gap-4 sm:grid-cols-3" noValidate>
            <input type="hidden" name="intent" value="queue" />
            <Field label="Scene (its newest version)" error={errors.sceneId ?? errors.versionId}>
              {(p) => (
                <Select {...p} name="sceneId" defaultValue={loaderData.scenes[0]?.id}>
                  {loaderData.scenes.map((s) => (
                    <option key={s.id} value={s.id}>
                      {s.name} (v{s.headNumber})
                    </option>
                  ))}
                </Select>
              )}
            </Field>
            <Field label="Samples per pixel" error={errors.spp}>
              {(p) => <Input {...p} name="spp" type="number" min={1} defaultValue={256} required />}
            </Field>
            <Field label="Passes per chunk (blank: about an eighth)" error={errors.chunkPasses}>
              {(p) => <Input {...p} name="chunkPasses" type="number" min={1} />}
            </Field>
            <Field label="Width (blank: the scene's)" error={errors.width}>
              {(p) => <Input {...p} name="width" type="number" min={1} />}
            </Field>
            <Field label="Height (blank: the scene's)" error={errors.height}>
              {(p) => <Input {...p} name="height" type="number" min={1} />}
            </Field>
            <Field label="Seed (blank: the scene's)" error={errors.seed}>
              {(p) => <Input {...p} name="seed" type="number" min={0} />}
            </Field>
            <div className="sm:col-span-3">
              <Button type="submit" tone="primary" disabled={busy || loaderData.scenes.length === 0}>
                Queue on the pool
              </Button>
            </div>
          </Form>
        </Panel>
      ) : null}

      <Panel title="Pool renders">
        {loaderData.renders.length === 0 ? (
          <p className="text-sm text-ink-muted">
            No pool renders yet. Queue one above or through the <Link className="text-accent underline" to="/docs/api">API</Link>; start workers with{" "}
            <code className="font-mono">npm run worker</code>.
          </p>
        ) : (
          <Table>
            <thead>
              <tr>
                <Th>Scene</Th>
                <Th>Status</Th>
                <Th>Progress</Th>
                <Th>Chunks</Th>
                <Th>Size · seed</Th>
                <Th />
              </tr>
            </thead>
            <tbody>
              {loaderData.renders.map((r) => (
                <tr key={r.id} data-render-id={r.id} data-status={r.status}>
                  <Td>
                    {r.sceneName}
                    {r.continued ? <span className="ml-1 text-xs text-ink-faint">(continued)</span> : null}
                  </Td>
                  <Td>
                    {r.status}
                    {r.error ? <span className="block text-xs text-danger">{r.error}</span> : null}
                  </Td>
                  <Td>
                    <div
                      className="h-2 w-32 overflow-hidden rounded bg-raised"
                      role="progressbar"
                      aria-valuemin={0}
                      aria-valuemax={r.spp}
                      aria-valuenow={r.sppDone}
                      aria-label={`${r.sppDone} of ${r.spp} spp`}
                    >
                      <div className="h-full bg-accent" style={{ width: `${Math.round((100 * r.sppDone) / Math.max(1, r.spp))}%` }} />
                    </div>
                    <span className="text-xs text-ink-muted">
                      {r.sppDone} / {r.spp} spp
                    </span>
                  </Td>
                  <Td>
                    <div className="flex flex-wrap gap-0.5">
                      {r.chunks.map((c) => (
                        <span
                          key={c.index}
                          className={`inline-block h-3 w-3 rounded-sm ${STATUS_TONE[c.status] ?? "bg-raised"}`}
                          title={`passes ${c.passes}: ${c.status}${c.worker ? ` on ${c.worker}` : ""}${c.attempts > 1 ? `, attempt ${c.attempts}` : ""}`}
                        />
                      ))}
                    </div>
                  </Td>
                  <Td className="text-xs text-ink-muted">
                    {r.size} · {r.seed}
                    {r.hash ? <span className="block font-mono">{r.hash}</span> : null}
                  </Td>
                  <Td>
                    {r.status === "done" ? (
                      <span className="flex gap-2 text-xs">
                        <a className="text-accent underline" href={`/api/v1/renders/${r.id}/image.png`}>
                          PNG
                        </a>
                        <a className="text-accent underline" href={`/api/v1/renders/${r.id}/image.hdr`}>
                          HDR
                        </a>
                        <a className="text-accent underline" href={`/api/v1/renders/${r.id}/image.pfm`}>
                          PFM
                        </a>
                      </span>
                    ) : (r.status === "queued" || r.status === "running") && loaderData.canRender ? (
                      <IntentButton intent="cancel" fields={{ renderId: r.id }} tone="danger" disabled={busy}>
                        Cancel
                      </IntentButton>
                    ) : null}
                  </Td>
                </tr>
              ))}
            </tbody>
          </Table>
        )}
      </Panel>
    </div>
  );
}

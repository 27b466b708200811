// The project's render library: every published render with its thumbnail and the facts needed to trust it
// (version, seed, spp, integrator, tracer version, hash). Sorting, filtering and paging happen on the
// server; the table reloads through a fetcher so the page does not navigate.
import { useState } from "react";
import { Link, useFetcher } from "react-router";
import { Button, buttonClass, Input, Notice, Select, Table, Td, Th } from "~/components/ui";
import { listRenders, parseRenderFilters, renderFacets, type RenderSort } from "~/models/render.server";
import { requireAccess } from "~/services/permissions.server";
import type { Route } from "./+types/projects.$projectId.renders._index";

const PAGE_SIZE = 20;

export function meta() {
  return [{ title: "Renders · Tracewell" }];
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireAccess(request, { projectId: params.projectId }, "view");
  const url = new URL(request.url);
  const filters = parseRenderFilters(url.searchParams);
  const page = Math.max(1, Number(url.searchParams.get("page")) || 1);
  const [list, facets] = await Promise.all([
    listRenders(access.projectId, filters, { page, pageSize: PAGE_SIZE }),
    renderFacets(access.projectId),
  ]);
  return {
    projectId: access.projectId,
    filters,
    facets,
    total: list.total,
    page: list.page,
    pageSize: list.pageSize,
    rows: list.rows.map((r) => ({
      id: r.id,
      title: r.title,
      sceneId: r.sceneId,
      sceneName: r.sceneName,
      versionId: r.versionId,
      versionNumber: r.versionNumber,
      authorName: r.authorName,
      createdAt: r.createdAt.toISOString(),
      spp: r.spp,
      seed: r.seed,
      width: r.width,
      height: r.height,
      integrator: r.integrator,
      tracerVersion: r.tracerVersion,
      accumulationHash: r.accumulationHash,
      renderMs: r.renderMs,
      samplesPerSecond: r.samplesPerSecond,
      source: r.source,
      files: [
        ...(["png", "hdr", "pfm", "state"] as const).filter((k) => r.files[k]),
        ...Object.keys(r.files.groups ?? {}).map((g) => `group-${g}`),
      ],
    })),
  };
}

type Data = Awaited<ReturnType<typeof loader>>;

const SORT_LABEL: Record<RenderSort, string> = { date: "Date", spp: "spp", scene: "Scene", author: "Author", integrator: "Integrator", time: "Render time" };

function seconds(ms: number | null): string {
  return ms === null ? "—" : ms < 10_000 ? `${(ms / 1000).toFixed(1)} s` : `${Math.round(ms / 1000)} s`;
}

export default function RenderLibrary({ loaderData }: Route.ComponentProps) {
  const fetcher = useFetcher<Data>();
  const d: Data = fetcher.data ?? loaderData;
  const base = `/projects/${d.projectId}/renders`;
  const [picked, setPicked] = useState<string[]>([]);
  const f = d.filters;

  const query = (changes: Record<string, string | number | undefined>) => {
    const q = new URLSearchParams();
    const merged: Record<string, string | number | undefined> = {
      sceneId: f.sceneId,
      authorId: f.authorId,
      integrator: f.integrator,
      minSpp: f.minSpp,
      maxSpp: f.maxSpp,
      from: f.from,
      to: f.to,
      sort: f.sort,
      dir: f.dir,
      page: d.page,
      ...changes,
    };
    for (const [k, v] of Object.entries(merged)) if (v !== undefined && v !== "") q.set(k, String(v));
    return q.toString();
  };
  const reload = (changes: Record<string, string | number | undefined>) => {
    const q = query({ page: 1, ...changes });
    fetcher.load(`${base}?${q}`);
    // Keep the address shareable without a navigation.
    window.history.replaceState(window.history.state, "", `${base}?${q}`);
  };
  const sortBy = (s: RenderSort) => reload({ sort: s, dir: f.sort === s && f.dir === "desc" ? "asc" : "desc" });
  const pages = Math.max(1, Math.ceil(d.total / d.pageSize));
  const togglePick = (id: string) => setPicked((p) => (p.includes(id) ? p.filter((x) => x !== id) : [...p.slice(-1), id]));
  const busy = fetcher.state !== "idle";
  const sortHeader = (s: RenderSort) => (
    <button type="button" className="hover:text-ink" onClick={() => sortBy(s)} aria-sort={f.sort === s ? (f.dir === "asc" ? "ascending" : "descending") : undefined}>
      {SORT_LABEL[s]}
      {f.sort === s ? (f.dir === "asc" ? " ↑" : " ↓") : ""}
    </button>
  );

  return (
    <div className="flex flex-col gap-4 p-6">
      <form
        className="flex flex-wrap items-end gap-3"
        aria-label="Filter renders"
        onSubmit={(e) => {
          e.preventDefault();
          const form = new FormData(e.currentTarget);
          const v = (k: string) => String(form.get(k) ?? "") || undefined;
          reload({ sceneId: v("sceneId"), authorId: v("authorId"), integrator: v("integrator"), minSpp: v("minSpp"), maxSpp: v("maxSpp"), from: v("from"), to: v("to") });
        }}
      >
        <label className="flex flex-col gap-1 text-xs text-ink-muted">
          Scene
          <Select name="sceneId" defaultValue={f.sceneId ?? ""} data-testid="filter-scene">
            <option value="">All scenes</option>
            {d.facets.scenes.map((s) => (
              <option key={s.id} value={s.id}>
                {s.name}
              </option>
            ))}
          </Select>
        </label>
        <label className="flex flex-col gap-1 text-xs text-ink-muted">
          Author
          <Select name="authorId" defaultValue={f.authorId ?? ""}>
            <option value="">Anyone</option>
            {d.facets.authors.map((a) => (
              <option key={a.id} value={a.id}>
                {a.name}
              </option>
            ))}
          </Select>
        </label>
        <label className="flex flex-col gap-1 text-xs text-ink-muted">
          Integrator
          <Select name="integrator" defaultValue={f.integrator ?? ""}>
            <option value="">Any</option>
            {d.facets.integrators.map((i) => (
              <option key={i} value={i}>
                {i}
              </option>
            ))}
          </Select>
        </label>
        <label className="flex flex-col gap-1 text-xs text-ink-muted">
          spp from
          <Input name="minSpp" type="number" min={1} className="w-24" defaultValue={f.minSpp ?? ""} />
        </label>
        <label className="flex flex-col gap-1 text-xs text-ink-muted">
          to
          <Input name="maxSpp" type="number" min={1} className="w-24" defaultValue={f.maxSpp ?? ""} />
        </label>
        <label className="flex flex-col gap-1 text-xs text-ink-muted">
          From date
          <Input name="from" type="date" defaultValue={f.from ?? ""} />
        </label>
        <label className="flex flex-col gap-1 text-xs text-ink-muted">
          To date
          <Input name="to" type="date" defaultValue={f.to ?? ""} />
        </label>
        <Button type="submit" size="md" disabled={busy}>
          Apply
        </Button>
        <div className="ml-auto flex items-center gap-2">
          {picked.length === 2 ? (
            <Link className={buttonClass("primary")} to={`${base}/compare?a=${picked[0]}&b=${picked[1]}`} data-testid="compare-renders">
              Compare the two selected
            </Link>
          ) : (
            <span className="text-xs text-ink-faint">Tick two renders to compare them.</span>
          )}
        </div>
      </form>

      {d.rows.length === 0 ? (
        <Notice>{d.total === 0 && !f.sceneId && !f.authorId && !f.integrator ? "No renders published yet. Render a scene in its workspace and publish it." : "No render matches these filters."}</Notice>
      ) : (
        <Table className={busy ? "opacity-60" : undefined}>
          <thead>
            <tr>
              <Th>
                <span className="sr-only">Select</span>
              </Th>
              <Th>
                <span className="sr-only">Thumbnail</span>
              </Th>
              <Th>{sortHeader("scene")}</Th>
              <Th>{sortHeader("author")}</Th>
              <Th>{sortHeader("date")}</Th>
              <Th>{sortHeader("spp")}</Th>
              <Th>{sortHeader("integrator")}</Th>
              <Th>{sortHeader("time")}</Th>
              <Th>Hash</Th>
              <Th>Files</Th>
            </tr>
          </thead>
          <tbody>
            {d.rows.map((r) => (
              <tr key={r.id} data-testid="render-row">
                <Td>
                  <input type="checkbox" aria-label={`Select render ${r.title || r.id.slice(0, 8)}`} checked={picked.includes(r.id)} onChange={() => togglePick(r.id)} />
                </Td>
                <Td>
                  <img src={`${base}/${r.id}/files/thumb`} alt="" loading="lazy" className="h-12 w-auto max-w-20 rounded border border-line bg-canvas object-contain" />
                </Td>
                <Td>
                  <Link className="text-accent hover:underline" to={`/projects/${d.projectId}/scenes/${r.sceneId}/history`}>
                    {r.sceneName}
                  </Link>{" "}
                  <span className="text-ink-muted">v{r.versionNumber}</span>
                  {r.title ? <div className="text-xs text-ink-muted">{r.title}</div> : null}
                </Td>
                <Td>{r.authorName ?? "—"}</Td>
                <Td className="whitespace-nowrap text-ink-muted">{new Date(r.createdAt).toLocaleString(undefined, { dateStyle: "medium", timeStyle: "short" })}</Td>
                <Td>
                  {r.spp}
                  <div className="text-xs text-ink-faint">
                    seed {r.seed} · {r.width}×{r.height}
                  </div>
                </Td>
                <Td>
                  {r.integrator}
                  <div className="text-xs text-ink-faint">
                    {r.source} · tracer {r.tracerVersion}
                  </div>
                </Td>
                <Td className="whitespace-nowrap">
                  {seconds(r.renderMs)}
                  {r.samplesPerSecond ? <div className="text-xs text-ink-faint">{(r.samplesPerSecond / 1e6).toFixed(2)} M samples/s</div> : null}
                </Td>
                <Td className="font-mono text-xs" title={r.accumulationHash ?? ""}>
                  {r.accumulationHash?.replace(/^[a-z0-9]+:/, "").slice(0, 10) ?? "—"}
                </Td>
                <Td>
                  <div className="flex flex-wrap gap-1 text-xs">
                    {r.files.map((file) => (
                      <a key={file} className="rounded border border-line px-1.5 py-0.5 hover:border-ink-faint" href={`${base}/${r.id}/files/${file}?download=1`} download>
                        {file}
                      </a>
                    ))}
                  </div>
                </Td>
              </tr>
            ))}
          </tbody>
        </Table>
      )}

      <nav aria-label="Pages" className="flex items-center gap-2 text-sm">
        <Button size="sm" disabled={d.page <= 1 || busy} onClick={() => reload({ page: d.page - 1 })}>
          Previous
        </Button>
        <span className="text-ink-muted" data-testid="render-page">
          Page {d.page} of {pages} · {d.total} render{d.total === 1 ? "" : "s"}
        </span>
        <Button size="sm" disabled={d.page >= pages || busy} onClick={() => reload({ page: d.page + 1 })}>
          Next
        </Button>
      </nav>
    </div>
  );
}

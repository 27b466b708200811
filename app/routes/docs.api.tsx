// /docs/api: the API described for people. The endpoint table is read from the same OpenAPI document the
// server publishes, so the page cannot list an endpoint that does not exist; the walkthrough is ours.
import { Link } from "react-router";
import { Notice, Panel, Table, Td, Th } from "~/components/ui";
import { openApiDocument } from "~/services/openapi.server";
import type { Route } from "./+types/docs.api";

export const meta: Route.MetaFunction = () => [{ title: "API · Tracewell" }];

type Operation = { method: string; path: string; summary: string; scope: string };

const SCOPE_BY_OPERATION: Record<string, string> = {
  createVersion: "render",
  createRender: "render",
  cancelRender: "render",
};

export async function loader() {
  const doc = openApiDocument() as { info: { description: string }; paths: Record<string, Record<string, { operationId?: string; summary?: string }>> };
  const operations: Operation[] = [];
  for (const [path, methods] of Object.entries(doc.paths)) {
    for (const [method, op] of Object.entries(methods)) {
      operations.push({
        method: method.toUpperCase(),
        path,
        summary: op.summary ?? humanise(op.operationId ?? ""),
        scope: path.endsWith("openapi.json") ? "none" : (SCOPE_BY_OPERATION[op.operationId ?? ""] ?? "read"),
      });
    }
  }
  return { operations, description: doc.info.description };
}

function humanise(id: string): string {
  const words = id.replace(/([A-Z])/g, " $1").toLowerCase().trim();
  return words.charAt(0).toUpperCase() + words.slice(1);
}

function Code({ children }: { children: string }) {
  return <pre className="overflow-x-auto rounded border border-line bg-canvas p-3 font-mono text-xs leading-relaxed text-ink">{children}</pre>;
}

const walkthrough = {
  env: `export TW=https://tracewell.harrow-lane.example
export TOKEN=tw_…   # from Account → API tokens, scope "render"`,
  scenes: `# Which scenes does the "Wren kettle packshots" project have?
curl -s -H "Authorization: Bearer $TOKEN" "$TW/api/v1/projects/$PROJECT/scenes?limit=20"
# → { "items": [ { "id": "…", "name": "Kettle on oak board", "headVersionId": "8c1f…" } ], "nextCursor": null }`,
  version: `# Fetch the head version (immutable: keep the ETag and revalidate for free)
curl -s -D - -H "Authorization: Bearer $TOKEN" "$TW/api/v1/versions/8c1f…" -o head.json
# ETag: "version-8c1f…"
curl -s -o /dev/null -w "%{http_code}\\n" -H "Authorization: Bearer $TOKEN" \\
     -H 'If-None-Match: "version-8c1f…"' "$TW/api/v1/versions/8c1f…"
# → 304`,
  save: `# Warm the key light a little and save on top of the head
jq '.scene.lights[0].radiance = [9.5, 8.2, 6.1] | {parentVersionId: .id, scene: .scene, message: "Warmer key for the catalogue"}' head.json \\
  | curl -s -X POST -H "Authorization: Bearer $TOKEN" -H "Content-Type: application/json" \\
         --data @- "$TW/api/v1/scenes/$SCENE/versions"
# 201 → the new version.  409 → someone saved first: error.headVersionId names the new head.
# 422 → error.path names the field, e.g. "scene.lights[0].radiance[2]"`,
  render: `# Queue 1024 spp at 1600×1200 on the pool (chunks of 64 passes spread over every worker)
curl -s -X POST -H "Authorization: Bearer $TOKEN" -H "Content-Type: application/json" \\
     -d '{"versionId":"9d20…","spp":1024,"width":1600,"height":1200,"chunkPasses":64,"title":"Catalogue hero"}' \\
     "$TW/api/v1/renders"
# 202 { "id": "r-…", "status": "queued", "sppDone": 0, "spp": 1024, … }

# Poll until done; progress is sppDone / spp
curl -s -H "Authorization: Bearer $TOKEN" "$TW/api/v1/renders/r-…" | jq '{status, sppDone, spp, accumulationHash}'

# Download the outputs
curl -s -H "Authorization: Bearer $TOKEN" -o hero.pfm "$TW/api/v1/renders/r-…/image.pfm"
curl -s -H "Authorization: Bearer $TOKEN" -o hero-key.pfm "$TW/api/v1/renders/r-…/groups/key.pfm"`,
  continueFrom: `# A 64 spp preview the art director published from the browser, finished on the pool to 1024
curl -s -X POST -H "Authorization: Bearer $TOKEN" -H "Content-Type: application/json" \\
     -d '{"continueFrom":"<preview render id>","spp":1024}' "$TW/api/v1/renders"
# Only passes 64…1023 are rendered; the result is bit-identical to 1024 spp from scratch.`,
  cancel: `curl -s -X DELETE -H "Authorization: Bearer $TOKEN" "$TW/api/v1/renders/r-…"   # every chunk stops`,
  worker: `# On any machine that reaches the database and the object store:
DATABASE_URL=postgres://… S3_ENDPOINT=https://… S3_BUCKET=tracewell \\
S3_ACCESS_KEY_ID=… S3_SECRET_ACCESS_KEY=… npm run worker`,
  error: `{ "error": { "code": "validation_failed",
             "message": "scene.lights[1].shape.radius: Too small: expected number to be >0",
             "path": "scene.lights[1].shape.radius",
             "issues": [ { "path": "scene.lights[1].shape.radius", "message": "…" } ] } }`,
};

export default function ApiDocs({ loaderData }: Route.ComponentProps) {
  return (
    <div className="mx-auto flex max-w-5xl flex-col gap-6 p-6">
      <header className="flex flex-col gap-2">
        <h1 className="text-xl font-bold">Tracewell API, version 1</h1>
        <p className="text-sm text-ink-muted">{loaderData.description}</p>
        <p className="text-sm">
          Machine-readable description:{" "}
          <a className="text-accent underline" href="/api/v1/openapi.json">
            /api/v1/openapi.json
          </a>{" "}
          (OpenAPI 3.1, generated from the schemas the server validates with). Create tokens on your{" "}
          <Link className="text-accent underline" to="/account">
            account page
          </Link>
          .
        </p>
      </header>

      <Panel title="Endpoints">
        <Table>
          <thead>
            <tr>
              <Th>Method</Th>
              <Th>Path</Th>
              <Th>What it does</Th>
              <Th>Token scope</Th>
            </tr>
          </thead>
          <tbody>
            {loaderData.operations.map((op) => (
              <tr key={`${op.method} ${op.path}`}>
                <Td className="font-mono text-xs">{op.method}</Td>
                <Td className="font-mono text-xs">{op.path}</Td>
                <Td>{op.summary}</Td>
                <Td>{op.scope}</Td>
              </tr>
            ))}
          </tbody>
        </Table>
      </Panel>

      <Panel title="Tokens, roles and errors">
        <div className="flex flex-col gap-3 text-sm">
          <p>
            Send <code className="font-mono">Authorization: Bearer tw_…</code>. A token acts for its person and never beyond their role in a
            project: a <em>read</em> token lists and downloads; a <em>render</em> token may also save versions and queue or cancel renders,
            if its person is an editor or owner. Things you may not see answer 404, exactly as if they did not exist; things you may see
            but not change answer 403 and say why.
          </p>
          <p>Every failure has one shape. The code is stable; the message is for people; the path names the field.</p>
          <Code>{walkthrough.error}</Code>
          <ul className="list-disc pl-5 text-ink-muted">
            <li>
              <strong className="text-ink">Lists</strong> are cursor-paginated: pass <code className="font-mono">?limit=</code> (1–200) and the{" "}
              <code className="font-mono">nextCursor</code> of the previous page as <code className="font-mono">?cursor=</code>; the{" "}
              <code className="font-mono">Link: rel="next"</code> header carries the same URL. New rows never shift a walk in progress.
            </li>
            <li>
              <strong className="text-ink">Versions and finished render files never change.</strong> They carry strong ETags; send{" "}
              <code className="font-mono">If-None-Match</code> and get 304.
            </li>
            <li>
              <strong className="text-ink">Rate limit</strong> per token: a burst allowance that refills every second (
              <code className="font-mono">RateLimit-Limit</code>, <code className="font-mono">RateLimit-Remaining</code>). Beyond it: 429 with{" "}
              <code className="font-mono">Retry-After</code> in seconds.
            </li>
          </ul>
        </div>
      </Panel>

      <Panel title="Walkthrough: the Wren kettle catalogue shot from a pipeline script">
        <div className="flex flex-col gap-3 text-sm">
          <Code>{walkthrough.env}</Code>
          <Code>{walkthrough.scenes}</Code>
          <Code>{walkthrough.version}</Code>
          <Code>{walkthrough.save}</Code>
          <Code>{walkthrough.render}</Code>
          <Code>{walkthrough.continueFrom}</Code>
          <Code>{walkthrough.cancel}</Code>
        </div>
      </Panel>

      <Panel title="The render pool">
        <div className="flex flex-col gap-3 text-sm">
          <p>
            A pool render is split into chunks of sample passes. Any worker takes any chunk and stores its exact partial sums; when the last
            chunk is in, one worker merges them. The sums are integers, so the order does not matter and the result is bit-identical to one
            process rendering every pass: compare <code className="font-mono">accumulationHash</code>. A worker that dies mid-chunk loses
            only that chunk; after the chunk's time limit another worker redoes it.
          </p>
          <p>
            The stratification pattern is the scene's own <code className="font-mono">render.spp</code>; the <code className="font-mono">spp</code>{" "}
            you ask for is how many passes to take. So a render of 64 passes is exactly the first 64 passes of one of 1024 with the same seed and
            size, which is what makes continuing a preview exact.
          </p>
          <p>A worker needs only the database and the object store, so any machine can join:</p>
          <Code>{walkthrough.worker}</Code>
          <p>
            Settings: <code className="font-mono">RENDER_POOL</code> names a separate pool (servers queue to it, workers take from it; unset, all
            share one); <code className="font-mono">RENDER_CHUNK_EXPIRE_SECONDS</code> (server, default 900) is how long a chunk may stay taken
            before another worker redoes it, so keep chunks shorter than that; <code className="font-mono">RENDER_WORKER_NAME</code> labels the
            worker in chunk lists. Each project's <em>pool</em> page (<code className="font-mono">/projects/&lt;id&gt;/pool</code>) shows chunks
            as workers take them.
          </p>
          <Notice>
            Illuminance-like figures elsewhere in Tracewell are estimates from a simulation; defer to local codes and licensed lighting practice
            for real installations.
          </Notice>
        </div>
      </Panel>
    </div>
  );
}

// The Scenes tab: every scene of the project with its latest version.
import { Link } from "react-router";
import { Notice, Table, Td, Th } from "~/components/ui";
import { listScenes } from "~/models/scene.server";
import { requireAccess } from "~/services/permissions.server";
import type { Route } from "./+types/projects.$projectId._index";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { role } = await requireAccess(request, { projectId: params.projectId }, "view");
  const scenes = await listScenes(params.projectId);
  return {
    projectId: params.projectId,
    role,
    scenes: scenes.map((s) => ({
      id: s.id,
      name: s.name,
      updatedAt: s.updatedAt.toISOString(),
      head: s.headNumber === null ? null : { number: s.headNumber, message: s.headMessage ?? "", author: s.headAuthorName },
      versionCount: s.versionCount,
    })),
  };
}

export default function ProjectScenes({ loaderData }: Route.ComponentProps) {
  const { scenes, projectId } = loaderData;
  return (
    <div className="p-6">
      {scenes.length === 0 ? (
        <Notice>No scenes in this project yet.</Notice>
      ) : (
        <Table>
          <thead>
            <tr>
              <Th>Scene</Th>
              <Th>Latest version</Th>
              <Th>Versions</Th>
              <Th>Last change</Th>
            </tr>
          </thead>
          <tbody>
            {scenes.map((s) => (
              <tr key={s.id}>
                <Td>
                  <Link to={`/projects/${projectId}/scenes/${s.id}`} className="text-accent hover:underline">
                    {s.name}
                  </Link>
                </Td>
                <Td className="text-ink-muted">
                  {s.head ? `#${s.head.number} ${s.head.message}${s.head.author ? ` · ${s.head.author}` : ""}` : "—"}
                </Td>
                <Td className="text-ink-muted">{s.versionCount}</Td>
                <Td className="text-ink-muted">{new Date(s.updatedAt).toLocaleString()}</Td>
              </tr>
            ))}
          </tbody>
        </Table>
      )}
    </div>
  );
}

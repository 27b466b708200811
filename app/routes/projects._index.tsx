import type { Route } from "./+types/projects._index";

export const meta: Route.MetaFunction = () => [{ title: "Projects · Tracewell" }];

export default function Projects() {
  return (
    <div className="p-6">
      <h1 className="text-xl font-bold">Projects</h1>
    </div>
  );
}

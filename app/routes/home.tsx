import { Link } from "react-router";
import { buttonClass } from "~/components/ui";
import type { Route } from "./+types/home";

export const meta: Route.MetaFunction = () => [
  { title: "Tracewell · shared lighting workbench" },
  { name: "description", content: "Block in lighting, tune materials and compare versions with a deterministic path tracer running on your own CPU cores." },
];

const points = [
  ["Light it in the browser", "Edit a JSON scene in a code editor or with forms; a path tracer on your own CPU cores refines the preview pass by pass, with soft shadows, glossy reflection and glass."],
  ["Balance without re-rendering", "Every light group renders to its own buffer, so gains and tints change the picture instantly; write the balance back into the scene when it looks right."],
  ["Same pixels for everyone", "Renders are deterministic: the same version, seed and sample count give bit-identical results on any machine, so a class or a review sees exactly what you saw."],
  ["A project's memory", "Versions with messages, forks, structural diffs, a render library with side-by-side and difference views, and an API whose render jobs run on a pool of server workers."],
] as const;

export default function Home() {
  return (
    <main className="mx-auto flex min-h-screen max-w-5xl flex-col px-8 py-10">
      <header className="flex items-center justify-between">
        <span className="flex items-center gap-2 text-lg font-bold tracking-tight">
          <img src="/favicon.svg" alt="" className="h-6 w-6" /> Tracewell
        </span>
        <nav className="flex gap-2">
          <Link to="/login" className={buttonClass("quiet")}>
            Sign in
          </Link>
          <Link to="/signup" className={buttonClass("primary")}>
            Create an account
          </Link>
        </nav>
      </header>
      <section className="mt-20 max-w-3xl">
        <h1 className="text-4xl leading-tight font-bold">A shared workbench for lighting and look development.</h1>
        <p className="mt-5 text-lg text-ink-muted">
          Tracewell is where a small team blocks in the lighting of a shot or a product: place area lights, tune
          materials, check soft shadows, reflections and refractions, then save, fork and compare versions. Scenes
          are plain JSON; renders come from a deterministic Monte Carlo path tracer that runs on your own CPU cores,
          and pipelines fetch the same renders over an HTTP API.
        </p>
      </section>
      <section className="mt-14 grid gap-4 sm:grid-cols-2">
        {points.map(([title, text]) => (
          <article key={title} className="rounded-[var(--radius-panel)] border border-line bg-panel p-5">
            <h2 className="font-medium text-accent">{title}</h2>
            <p className="mt-2 text-sm text-ink-muted">{text}</p>
          </article>
        ))}
      </section>
      <footer className="mt-auto pt-16 text-xs text-ink-faint">Tracewell · runs on CPU, no graphics card needed.</footer>
    </main>
  );
}

import { Link, NavLink } from "react-router";
import { cx } from "~/components/ui";

export type ShellUser = { id: string; name: string; email: string } | null;
export type ShellProject = { id: string; name: string; role: "owner" | "editor" | "viewer" };

/** The frame every signed-in page sits in: top bar, project navigation and the account menu. */
export function AppShell({
  user,
  projects,
  children,
}: {
  user: ShellUser;
  projects: ShellProject[];
  children: React.ReactNode;
}) {
  return (
    <div className="flex min-h-screen flex-col">
      <header className="flex h-12 items-center gap-4 border-b border-line bg-panel px-4">
        <Link to="/projects" className="flex items-center gap-2 font-bold tracking-tight">
          <img src="/favicon.svg" alt="" className="h-5 w-5" /> Tracewell
        </Link>
        <nav aria-label="Main" className="flex gap-1 text-sm">
          <NavLink to="/projects" end className={({ isActive }) => cx("rounded px-2 py-1", isActive ? "bg-raised text-ink" : "text-ink-muted hover:text-ink")}>
            Projects
          </NavLink>
          <NavLink to="/docs/api" className={({ isActive }) => cx("rounded px-2 py-1", isActive ? "bg-raised text-ink" : "text-ink-muted hover:text-ink")}>
            API
          </NavLink>
        </nav>
        <div className="ml-auto" data-testid="account-menu">
          {user ? (
            <details className="relative">
              <summary className="cursor-pointer list-none rounded px-2 py-1 text-sm text-ink-muted hover:bg-raised hover:text-ink">
                {user.name}
              </summary>
              <div className="absolute right-0 z-40 mt-1 w-56 rounded border border-line bg-panel p-1 text-sm shadow-xl">
                <p className="truncate px-2 py-1.5 text-xs text-ink-faint">{user.email}</p>
                <Link to="/account" className="block rounded px-2 py-1.5 hover:bg-raised">
                  Account and tokens
                </Link>
                <form method="post" action="/logout">
                  <button type="submit" className="w-full rounded px-2 py-1.5 text-left hover:bg-raised">
                    Sign out
                  </button>
                </form>
              </div>
            </details>
          ) : (
            <Link to="/login" className="text-sm text-ink-muted hover:text-ink">
              Sign in
            </Link>
          )}
        </div>
      </header>
      <div className="flex flex-1">
        <aside aria-label="Projects" className="hidden w-56 shrink-0 border-r border-line bg-panel/60 p-3 md:block">
          <p className="px-2 pb-2 text-xs font-medium tracking-wide text-ink-faint uppercase">Your projects</p>
          <ul className="flex flex-col gap-0.5 text-sm">
            {projects.map((p) => (
              <li key={p.id}>
                <NavLink
                  to={`/projects/${p.id}`}
                  className={({ isActive }) => cx("block truncate rounded px-2 py-1.5", isActive ? "bg-raised text-ink" : "text-ink-muted hover:text-ink")}
                >
                  {p.name}
                </NavLink>
              </li>
            ))}
            {projects.length === 0 ? <li className="px-2 text-xs text-ink-faint">No projects yet.</li> : null}
          </ul>
        </aside>
        <main className="min-w-0 flex-1">{children}</main>
      </div>
    </div>
  );
}

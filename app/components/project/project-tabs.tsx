import { NavLink } from "react-router";
import { cx } from "~/components/ui";
import type { Role } from "~/lib/roles";

type Tab = { to: string; label: string; end?: boolean; ownersOnly?: boolean };

// Every tab of a project. A tab whose page is not built yet still shows; its link answers 404 until then.
const TABS: Tab[] = [
  { to: "", label: "Scenes", end: true },
  { to: "renders", label: "Renders" },
  { to: "pool", label: "Render pool" },
  { to: "assets", label: "Assets" },
  { to: "sharing", label: "Sharing" },
  { to: "members", label: "Members" },
  { to: "activity", label: "Activity", ownersOnly: true },
];

export function ProjectTabs({ projectId, role }: { projectId: string; role: Role }) {
  return (
    <nav aria-label="Project" className="flex gap-1 border-b border-line px-6 text-sm">
      {TABS.filter((t) => !t.ownersOnly || role === "owner").map((t) => (
        <NavLink
          key={t.label}
          to={t.to ? `/projects/${projectId}/${t.to}` : `/projects/${projectId}`}
          end={t.end}
          className={({ isActive }) =>
            cx("-mb-px border-b-2 px-3 py-2", isActive ? "border-accent text-ink" : "border-transparent text-ink-muted hover:text-ink")
          }
        >
          {t.label}
        </NavLink>
      ))}
    </nav>
  );
}

export function RoleBadge({ role }: { role: Role }) {
  const tone = role === "owner" ? "border-accent/50 text-accent" : role === "editor" ? "border-ok/50 text-ok" : "border-line text-ink-muted";
  return (
    <span data-testid="role-badge" className={cx("rounded border px-1.5 py-0.5 text-xs", tone)}>
      {role === "owner" ? "Owner" : role === "editor" ? "Editor" : "Viewer"}
    </span>
  );
}

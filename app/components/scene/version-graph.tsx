// The scene's history drawn as a graph: its versions on one line (oldest left), restores as arcs from the
// version whose content came back, the origin a fork came from above, and forks taken from it below.
import { Link } from "react-router";

export type GraphVersion = { id: string; number: number; kind: string; parentId: string | null; sourceVersionId: string | null; message: string };
export type GraphLink = { label: string; href: string | null; versionId: string };

const STEP = 64;
const LEFT = 48;
const LANE = 92;
const R = 11;

export function VersionGraph({
  versions,
  headId,
  origin,
  forks,
  versionHref,
}: {
  versions: GraphVersion[];
  headId: string | null;
  origin: GraphLink | null;
  forks: GraphLink[];
  versionHref: (v: GraphVersion) => string;
}) {
  const ordered = [...versions].sort((a, b) => a.number - b.number);
  const x = new Map<string, number>();
  ordered.forEach((v, i) => x.set(v.id, LEFT + i * STEP));
  const width = Math.max(320, LEFT * 2 + (ordered.length - 1) * STEP + 160);
  const height = forks.length ? 170 : 130;
  const first = ordered[0];

  return (
    <div className="overflow-x-auto" data-testid="version-graph">
      <svg width={width} height={height} role="img" aria-label="Version graph" className="text-ink">
        <defs>
          <marker id="vg-arrow" viewBox="0 0 8 8" refX="7" refY="4" markerWidth="7" markerHeight="7" orient="auto-start-reverse">
            <path d="M0,0 L8,4 L0,8 z" fill="currentColor" className="text-ink-faint" />
          </marker>
        </defs>

        {/* parent → child edges on the main line */}
        {ordered.map((v) =>
          v.parentId && x.has(v.parentId) ? (
            <line key={`e-${v.id}`} x1={x.get(v.parentId)! + R} y1={LANE} x2={x.get(v.id)! - R} y2={LANE} stroke="var(--color-line, #555)" strokeWidth={2} markerEnd="url(#vg-arrow)" />
          ) : null,
        )}

        {/* restores: an arc over the line from the restored version */}
        {ordered.map((v) => {
          if (v.kind !== "restore" || !v.sourceVersionId || !x.has(v.sourceVersionId)) return null;
          const x1 = x.get(v.sourceVersionId)!;
          const x2 = x.get(v.id)!;
          const lift = Math.min(56, 18 + (x2 - x1) / 6);
          return (
            <path
              key={`r-${v.id}`}
              d={`M${x1},${LANE - R} C${x1},${LANE - R - lift} ${x2},${LANE - R - lift} ${x2},${LANE - R - 2}`}
              fill="none"
              stroke="var(--color-warn, #c90)"
              strokeDasharray="4 3"
              strokeWidth={1.5}
              markerEnd="url(#vg-arrow)"
            >
              <title>{`v${v.number} restores the content of an earlier version`}</title>
            </path>
          );
        })}

        {/* where this scene was forked from */}
        {origin && first ? (
          <g>
            <line x1={LEFT - 30} y1={24} x2={x.get(first.id)! - R / 2} y2={LANE - R} stroke="var(--color-accent, #7ab)" strokeWidth={1.5} strokeDasharray="2 3" markerEnd="url(#vg-arrow)" />
            <circle cx={LEFT - 30} cy={20} r={5} fill="var(--color-accent, #7ab)" />
            {origin.href ? (
              <Link to={origin.href}>
                <text x={LEFT - 18} y={24} fontSize={11} fill="currentColor" className="underline">
                  forked from {origin.label}
                </text>
              </Link>
            ) : (
              <text x={LEFT - 18} y={24} fontSize={11} fill="currentColor">
                forked from {origin.label}
              </text>
            )}
          </g>
        ) : null}

        {/* versions */}
        {ordered.map((v) => {
          const cx = x.get(v.id)!;
          const isHead = v.id === headId;
          return (
            <Link key={v.id} to={versionHref(v)} aria-label={`Version ${v.number}: ${v.message}`}>
              <circle
                cx={cx}
                cy={LANE}
                r={R}
                fill={isHead ? "var(--color-accent, #7ab)" : "var(--color-panel, #222)"}
                stroke={v.kind === "restore" ? "var(--color-warn, #c90)" : v.kind === "fork" || v.kind === "import" ? "var(--color-accent, #7ab)" : "var(--color-ink-muted, #aaa)"}
                strokeWidth={2}
              >
                <title>{`v${v.number} · ${v.kind} · ${v.message}`}</title>
              </circle>
              <text x={cx} y={LANE + 4} fontSize={10} textAnchor="middle" fill={isHead ? "var(--color-accent-ink, #000)" : "currentColor"}>
                {v.number}
              </text>
            </Link>
          );
        })}

        {/* forks taken from this scene */}
        {forks.map((f, i) => {
          const from = x.get(f.versionId);
          if (from === undefined) return null;
          const fx = from + 18 + (i % 3) * 10;
          const fy = LANE + 44 + (i % 2) * 20;
          return (
            <g key={`f-${i}`}>
              <path d={`M${from},${LANE + R} C${from},${fy} ${fx},${fy} ${fx + 8},${fy}`} fill="none" stroke="var(--color-accent, #7ab)" strokeWidth={1.5} markerEnd="url(#vg-arrow)" />
              {f.href ? (
                <Link to={f.href}>
                  <text x={fx + 12} y={fy + 4} fontSize={11} fill="currentColor" className="underline">
                    {f.label}
                  </text>
                </Link>
              ) : (
                <text x={fx + 12} y={fy + 4} fontSize={11} fill="currentColor">
                  {f.label}
                </text>
              )}
            </g>
          );
        })}
      </svg>
      <p className="mt-1 text-xs text-ink-faint">
        Filled circle: the head. Dashed arcs: restores. Blue lines: forks (from above: where this scene came from; below: forks of it).
      </p>
    </div>
  );
}

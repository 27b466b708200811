import { cx } from "./cx";

export function Panel({
  title,
  actions,
  className,
  children,
}: {
  title?: React.ReactNode;
  actions?: React.ReactNode;
  className?: string;
  children: React.ReactNode;
}) {
  return (
    <section className={cx("rounded-[var(--radius-panel)] border border-line bg-panel", className)}>
      {title || actions ? (
        <header className="flex items-center justify-between gap-3 border-b border-line px-4 py-2.5">
          {title ? <h2 className="text-sm font-medium tracking-wide text-ink">{title}</h2> : <span />}
          {actions ? <div className="flex items-center gap-2">{actions}</div> : null}
        </header>
      ) : null}
      <div className="p-4">{children}</div>
    </section>
  );
}

export function Notice({ tone = "info", children }: { tone?: "info" | "warn" | "danger" | "ok"; children: React.ReactNode }) {
  const tones = {
    info: "border-line bg-raised text-ink-muted",
    warn: "border-warn/40 bg-warn/10 text-warn",
    danger: "border-danger/40 bg-danger/10 text-danger",
    ok: "border-ok/40 bg-ok/10 text-ok",
  } as const;
  return (
    <div role={tone === "danger" ? "alert" : "status"} className={cx("rounded border px-3 py-2 text-sm", tones[tone])}>
      {children}
    </div>
  );
}

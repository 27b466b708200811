import { Link } from "react-router";

/** The narrow centred frame of the signed-out pages (sign in, sign up, password reset, invitations). */
export function AuthCard({ title, intro, children, footer }: { title: string; intro?: React.ReactNode; children: React.ReactNode; footer?: React.ReactNode }) {
  return (
    <main className="flex min-h-screen flex-col items-center px-4 pt-16 pb-10">
      <Link to="/" className="mb-8 flex items-center gap-2 text-lg font-bold tracking-tight">
        <img src="/favicon.svg" alt="" className="h-6 w-6" /> Tracewell
      </Link>
      <section className="w-full max-w-sm rounded-[var(--radius-panel)] border border-line bg-panel p-6">
        <h1 className="text-lg font-bold">{title}</h1>
        {intro ? <div className="mt-1 text-sm text-ink-muted">{intro}</div> : null}
        <div className="mt-5">{children}</div>
      </section>
      {footer ? <div className="mt-4 text-sm text-ink-muted">{footer}</div> : null}
    </main>
  );
}

import "@fontsource/space-grotesk/400.css";
import "@fontsource/space-grotesk/500.css";
import "@fontsource/space-grotesk/700.css";
import "./app.css";
import { useEffect } from "react";
import { isRouteErrorResponse, Links, Meta, Outlet, Scripts, ScrollRestoration } from "react-router";
import type { Route } from "./+types/root";
import { Toaster } from "./components/ui/toast";

export const meta: Route.MetaFunction = () => [{ title: "Tracewell" }];

export const links: Route.LinksFunction = () => [{ rel: "icon", href: "/favicon.svg", type: "image/svg+xml" }];

export function Layout({ children }: { children: React.ReactNode }) {
  return (
    <html lang="en">
      <head>
        <meta charSet="utf-8" />
        <meta name="viewport" content="width=device-width, initial-scale=1" />
        <Meta />
        <Links />
      </head>
      <body className="min-h-screen bg-canvas font-sans text-ink antialiased">
        {children}
        <ScrollRestoration />
        <Scripts />
      </body>
    </html>
  );
}

export default function App() {
  useEffect(() => {
    // Browser tests wait for this before clicking: clicks before hydration do nothing.
    document.documentElement.dataset.hydrated = "true";
  }, []);
  return (
    <>
      <Outlet />
      <Toaster />
    </>
  );
}

export function ErrorBoundary({ error }: Route.ErrorBoundaryProps) {
  let title = "Something went wrong";
  let detail = "An unexpected error occurred.";
  if (isRouteErrorResponse(error)) {
    title = error.status === 404 ? "Not found" : `${error.status} ${error.statusText}`;
    detail = typeof error.data === "string" && error.data ? error.data : error.status === 404 ? "There is nothing at this address, or you may not see it." : detail;
  } else if (import.meta.env.DEV && error instanceof Error) {
    detail = error.message;
  }
  return (
    <main className="mx-auto max-w-xl p-12">
      <h1 className="text-2xl font-bold">{title}</h1>
      <p className="mt-3 text-ink-muted">{detail}</p>
      <a className="mt-6 inline-block text-accent underline" href="/">
        Back to Tracewell
      </a>
    </main>
  );
}

// Runs the whole app in-process for integration tests: Vite compiles the current sources (no production build
// needed) and React Router's request handler answers real Request objects through every loader and action.
// With TRACEWELL_URL set, requests go over HTTP to that server instead (a served build, see bin/serve-test).
import type { ServerBuild } from "react-router";

export type AppRoute = { id: string; file: string; // file = route id (the module path without extension)
  path: string; index: boolean; hasLoader: boolean; hasAction: boolean; hasComponent: boolean };
export type AppServer = { fetch: (path: string, init?: RequestInit) => Promise<Response>; routes: AppRoute[]; close: () => Promise<void> };

function flattenRoutes(build: ServerBuild): AppRoute[] {
  const byId = build.routes;
  const fullPath = (id: string): string => {
    const r = byId[id];
    if (!r) return "";
    const own = r.path ?? "";
    const parent = r.parentId ? fullPath(r.parentId) : "";
    return [parent, own].filter(Boolean).join("/").replace(/\/+/g, "/");
  };
  return Object.values(byId)
    .filter((r): r is NonNullable<typeof r> => Boolean(r) && r!.id !== "root")
    .map((r) => ({
      id: r.id,
      file: r.id,
      path: "/" + fullPath(r.id),
      index: Boolean(r.index),
      hasLoader: Boolean(r.module.loader),
      hasAction: Boolean(r.module.action),
      hasComponent: Boolean(r.module.default),
    }));
}

export async function startApp(): Promise<AppServer> {
  const { createServer } = await import("vite");
  const { createRequestHandler } = await import("react-router");
  const vite = await createServer({ server: { middlewareMode: true, hmr: false, ws: false }, appType: "custom", logLevel: "error" });
  const build = (await vite.ssrLoadModule("virtual:react-router/server-build")) as ServerBuild;
  const handler = createRequestHandler(build, "development");
  // TRACEWELL_URL names a served app (vitest itself sets BASE_URL to "/", so that name cannot be used).
  const base = /^https?:\/\//.test(process.env.TRACEWELL_URL ?? "") ? process.env.TRACEWELL_URL : undefined;
  const origin = base ?? process.env.APP_URL ?? "http://localhost:3100";
  return {
    routes: flattenRoutes(build),
    fetch: (path, init) => {
      const url = new URL(path, origin).toString();
      if (base) return fetch(url, { redirect: "manual", ...init });
      return handler(new Request(url, { redirect: "manual", ...init }));
    },
    close: () => vite.close(),
  };
}

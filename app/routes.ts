import { index, layout, route, type RouteConfig } from "@react-router/dev/routes";

// One module per route, named after its URL. API resource routes live under api.v1.*.
export default [
  index("routes/home.tsx"),
  route("healthz", "routes/healthz.ts"),
  route("dev/outbox", "routes/dev.outbox.tsx"),

  layout("routes/app-shell.tsx", [
    route("projects", "routes/projects._index.tsx"),
  ]),
] satisfies RouteConfig;

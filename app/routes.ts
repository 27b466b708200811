import { index, layout, route, type RouteConfig } from "@react-router/dev/routes";

// One module per route, named after its URL. API resource routes live under api.v1.*.
export default [
  index("routes/home.tsx"),
  route("healthz", "routes/healthz.ts"),
  route("dev/outbox", "routes/dev.outbox.tsx"),

  // API v1 (resource routes; JSON errors; Bearer tokens)
  route("api/v1/openapi.json", "routes/api.v1.openapi[.]json.ts"),
  route("api/v1/projects", "routes/api.v1.projects.ts"),
  route("api/v1/projects/:projectId", "routes/api.v1.projects.$projectId.ts"),
  route("api/v1/projects/:projectId/scenes", "routes/api.v1.projects.$projectId.scenes.ts"),
  route("api/v1/projects/:projectId/renders", "routes/api.v1.projects.$projectId.renders.ts"),
  route("api/v1/scenes/:sceneId", "routes/api.v1.scenes.$sceneId.ts"),
  route("api/v1/scenes/:sceneId/versions", "routes/api.v1.scenes.$sceneId.versions.ts"),
  route("api/v1/versions/:versionId", "routes/api.v1.versions.$versionId.ts"),
  route("api/v1/renders", "routes/api.v1.renders.ts"),
  route("api/v1/renders/:renderId", "routes/api.v1.renders.$renderId.ts"),
  route("api/v1/renders/:renderId/groups/:group", "routes/api.v1.renders.$renderId.groups.$group.ts"),
  route("api/v1/renders/:renderId/:file", "routes/api.v1.renders.$renderId.$file.ts"),
  route("api/v1/*", "routes/api.v1.$.ts"),
  route("login", "routes/login.tsx"),
  route("signup", "routes/signup.tsx"),
  route("logout", "routes/logout.tsx"),
  route("forgot-password", "routes/forgot-password.tsx"),
  route("reset-password/:token", "routes/reset-password.$token.tsx"),
  route("invitations/:token", "routes/invitations.$token.tsx"),

  // Resource routes of the render library (A3).
  route("projects/:projectId/renders/publish", "routes/projects.$projectId.renders.publish.ts"),
  route("projects/:projectId/renders/:renderId/files/:file", "routes/projects.$projectId.renders.$renderId.files.$file.ts"),
  route("projects/:projectId/assets/upload", "routes/projects.$projectId.assets.upload.ts"),
  route("projects/:projectId/uploads", "routes/projects.$projectId.uploads.ts"),
  route("projects/:projectId/uploads/:uploadId/files/:slot", "routes/projects.$projectId.uploads.$uploadId.files.$slot.ts"),
  route("projects/:projectId/uploads/:uploadId/finish", "routes/projects.$projectId.uploads.$uploadId.finish.ts"),
  route("projects/:projectId/uploads/:uploadId/cancel", "routes/projects.$projectId.uploads.$uploadId.cancel.ts"),
  route("projects/:projectId/assets/:sha", "routes/projects.$projectId.assets.$sha.ts"),
  route("projects/:projectId/assets.json", "routes/projects.$projectId.assets[.]json.ts"),
  route("projects/:projectId/scenes/:sceneId/versions/:versionId/bundle", "routes/projects.$projectId.scenes.$sceneId.versions.$versionId.bundle.ts"),
  route("s/:token/assets/:sha", "routes/s.$token.assets.$sha.ts"),
  route("s/:token/renders/:renderId/:file", "routes/s.$token.renders.$renderId.$file.ts"),

  layout("routes/app-shell.tsx", [
    route("projects", "routes/projects._index.tsx"),
    route("docs/api", "routes/docs.api.tsx"),
    route("account", "routes/account.tsx"),
    route("s/:token", "routes/s.$token.tsx"),
    // One project: header and tab bar. Tabs (renders, assets, sharing, ...) are added as children here.
    route("projects/:projectId", "routes/projects.$projectId.tsx", [
      index("routes/projects.$projectId._index.tsx"),
      route("members", "routes/projects.$projectId.members.tsx"),
      route("activity", "routes/projects.$projectId.activity.tsx"),
      route("scenes/:sceneId", "routes/projects.$projectId.scenes.$sceneId.tsx"),
      route("scenes/:sceneId/history", "routes/projects.$projectId.scenes.$sceneId.history.tsx"),
      route("scenes/:sceneId/compare", "routes/projects.$projectId.scenes.$sceneId.compare.tsx"),
      route("renders", "routes/projects.$projectId.renders._index.tsx"),
      route("renders/compare", "routes/projects.$projectId.renders.compare.tsx"),
      route("assets", "routes/projects.$projectId.assets._index.tsx"),
      route("sharing", "routes/projects.$projectId.sharing.tsx"),
      route("pool", "routes/projects.$projectId.pool.tsx"),
    ]),
  ]),
] satisfies RouteConfig;

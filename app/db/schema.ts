// The whole Tracewell database. One file so a migration diff shows every change at once.
// Families: identity (users, sessions, sign-in throttling, resets), projects (members, invitations,
// activity, tokens), scenes (versions), renders (chunks for the pool), assets and share links.
import {
  bigserial,
  bigint,
  boolean,
  index,
  integer,
  jsonb,
  pgEnum,
  pgTable,
  primaryKey,
  real,
  text,
  timestamp,
  uniqueIndex,
  uuid,
} from "drizzle-orm/pg-core";

const createdAt = () => timestamp("created_at", { withTimezone: true }).notNull().defaultNow();

export const projectRole = pgEnum("project_role", ["owner", "editor", "viewer"]);
export const tokenScope = pgEnum("token_scope", ["read", "render"]);
export const renderStatus = pgEnum("render_status", ["queued", "running", "done", "failed", "cancelled"]);
export const renderSource = pgEnum("render_source", ["browser", "pool"]);
export const chunkStatus = pgEnum("chunk_status", ["pending", "running", "done", "failed", "cancelled"]);
export const assetKind = pgEnum("asset_kind", ["mesh", "envmap"]);
export const versionKind = pgEnum("version_kind", ["save", "restore", "fork", "import", "create"]);

// ---------- identity ----------
export const users = pgTable("users", {
  id: uuid("id").primaryKey().defaultRandom(),
  email: text("email").notNull().unique(), // always stored lower-cased
  name: text("name").notNull(),
  passwordHash: text("password_hash").notNull(),
  createdAt: createdAt(),
  // Per-account sign-in throttling: counted failures and a lock that expires by itself.
  failedSignIns: integer("failed_sign_ins").notNull().default(0),
  lockedUntil: timestamp("locked_until", { withTimezone: true }),
});

// Server-side record of each signed-in browser, so sessions can be listed and revoked.
export const sessions = pgTable(
  "sessions",
  {
    id: uuid("id").primaryKey().defaultRandom(),
    userId: uuid("user_id").notNull().references(() => users.id, { onDelete: "cascade" }),
    createdAt: createdAt(),
    lastSeenAt: timestamp("last_seen_at", { withTimezone: true }).notNull().defaultNow(),
    userAgent: text("user_agent"),
    address: text("address"),
    revokedAt: timestamp("revoked_at", { withTimezone: true }),
  },
  (t) => [index("sessions_user_idx").on(t.userId)],
);

// Per-address sign-in throttling (an address may try many accounts).
export const signInThrottles = pgTable("sign_in_throttles", {
  key: text("key").primaryKey(), // "addr:<ip>"
  failures: integer("failures").notNull().default(0),
  windowStartedAt: timestamp("window_started_at", { withTimezone: true }).notNull().defaultNow(),
  lockedUntil: timestamp("locked_until", { withTimezone: true }),
});

export const passwordResets = pgTable("password_resets", {
  id: uuid("id").primaryKey().defaultRandom(),
  userId: uuid("user_id").notNull().references(() => users.id, { onDelete: "cascade" }),
  tokenHash: text("token_hash").notNull().unique(),
  expiresAt: timestamp("expires_at", { withTimezone: true }).notNull(),
  usedAt: timestamp("used_at", { withTimezone: true }),
  createdAt: createdAt(),
});

// ---------- projects ----------
export const projects = pgTable("projects", {
  id: uuid("id").primaryKey().defaultRandom(),
  name: text("name").notNull(),
  description: text("description").notNull().default(""),
  createdBy: uuid("created_by").references(() => users.id, { onDelete: "set null" }),
  createdAt: createdAt(),
});

export const memberships = pgTable(
  "memberships",
  {
    projectId: uuid("project_id").notNull().references(() => projects.id, { onDelete: "cascade" }),
    userId: uuid("user_id").notNull().references(() => users.id, { onDelete: "cascade" }),
    role: projectRole("role").notNull(),
    createdAt: createdAt(),
  },
  (t) => [primaryKey({ columns: [t.projectId, t.userId] }), index("memberships_user_idx").on(t.userId)],
);

export const invitations = pgTable(
  "invitations",
  {
    id: uuid("id").primaryKey().defaultRandom(),
    projectId: uuid("project_id").notNull().references(() => projects.id, { onDelete: "cascade" }),
    email: text("email").notNull(),
    role: projectRole("role").notNull(),
    tokenHash: text("token_hash").notNull().unique(),
    invitedBy: uuid("invited_by").references(() => users.id, { onDelete: "set null" }),
    expiresAt: timestamp("expires_at", { withTimezone: true }).notNull(),
    acceptedAt: timestamp("accepted_at", { withTimezone: true }),
    revokedAt: timestamp("revoked_at", { withTimezone: true }),
    createdAt: createdAt(),
  },
  (t) => [index("invitations_project_idx").on(t.projectId)],
);

export const activity = pgTable(
  "activity",
  {
    id: bigserial("id", { mode: "number" }).primaryKey(),
    projectId: uuid("project_id").references(() => projects.id, { onDelete: "cascade" }),
    actorId: uuid("actor_id").references(() => users.id, { onDelete: "set null" }),
    kind: text("kind").notNull(), // e.g. "member.invited", "member.joined", "token.created"
    detail: jsonb("detail").$type<Record<string, unknown>>().notNull().default({}),
    createdAt: createdAt(),
  },
  (t) => [index("activity_project_idx").on(t.projectId, t.createdAt)],
);

export const apiTokens = pgTable(
  "api_tokens",
  {
    id: uuid("id").primaryKey().defaultRandom(),
    userId: uuid("user_id").notNull().references(() => users.id, { onDelete: "cascade" }),
    name: text("name").notNull(),
    scope: tokenScope("scope").notNull(),
    // Only a hash is stored; the visible prefix lets people tell tokens apart in lists.
    tokenHash: text("token_hash").notNull().unique(),
    prefix: text("prefix").notNull(),
    expiresAt: timestamp("expires_at", { withTimezone: true }),
    lastUsedAt: timestamp("last_used_at", { withTimezone: true }),
    revokedAt: timestamp("revoked_at", { withTimezone: true }),
    createdAt: createdAt(),
  },
  (t) => [index("api_tokens_user_idx").on(t.userId)],
);

// ---------- scenes and versions ----------
export const scenes = pgTable(
  "scenes",
  {
    id: uuid("id").primaryKey().defaultRandom(),
    projectId: uuid("project_id").notNull().references(() => projects.id, { onDelete: "cascade" }),
    name: text("name").notNull(),
    // Head of the linear history; saves compare-and-set this to detect conflicts.
    headVersionId: uuid("head_version_id"),
    forkedFromVersionId: uuid("forked_from_version_id"),
    createdBy: uuid("created_by").references(() => users.id, { onDelete: "set null" }),
    createdAt: createdAt(),
    updatedAt: timestamp("updated_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [index("scenes_project_idx").on(t.projectId)],
);

export const sceneVersions = pgTable(
  "scene_versions",
  {
    id: uuid("id").primaryKey().defaultRandom(),
    sceneId: uuid("scene_id").notNull().references(() => scenes.id, { onDelete: "cascade" }),
    number: integer("number").notNull(),
    parentId: uuid("parent_id"),
    kind: versionKind("kind").notNull().default("save"),
    // For restores: the version whose content was restored; for forks: the origin version.
    sourceVersionId: uuid("source_version_id"),
    message: text("message").notNull(),
    authorId: uuid("author_id").references(() => users.id, { onDelete: "set null" }),
    scene: jsonb("scene").$type<Record<string, unknown>>().notNull(),
    createdAt: createdAt(),
  },
  (t) => [uniqueIndex("scene_versions_number_idx").on(t.sceneId, t.number), index("scene_versions_parent_idx").on(t.parentId)],
);

// ---------- renders ----------
export type RenderFiles = {
  png?: string;
  hdr?: string;
  pfm?: string;
  thumb?: string;
  state?: string; // serialized accumulation, for continuing
  groups?: Record<string, string>;
};

export const renders = pgTable(
  "renders",
  {
    id: uuid("id").primaryKey().defaultRandom(),
    projectId: uuid("project_id").notNull().references(() => projects.id, { onDelete: "cascade" }),
    sceneId: uuid("scene_id").notNull().references(() => scenes.id, { onDelete: "cascade" }),
    versionId: uuid("version_id").notNull().references(() => sceneVersions.id, { onDelete: "cascade" }),
    source: renderSource("source").notNull(),
    status: renderStatus("status").notNull().default("queued"),
    title: text("title").notNull().default(""),
    spp: integer("spp").notNull(),
    sppDone: integer("spp_done").notNull().default(0),
    seed: bigint("seed", { mode: "number" }).notNull(),
    width: integer("width").notNull(),
    height: integer("height").notNull(),
    integrator: text("integrator").notNull(),
    tracerVersion: text("tracer_version").notNull(),
    accumulationHash: text("accumulation_hash"),
    renderMs: integer("render_ms"),
    samplesPerSecond: real("samples_per_second"),
    // When a pool render continues from a browser preview: the render it started from.
    continuedFromId: uuid("continued_from_id"),
    files: jsonb("files").$type<RenderFiles>().notNull().default({}),
    error: text("error"),
    createdBy: uuid("created_by").references(() => users.id, { onDelete: "set null" }),
    createdAt: createdAt(),
    finishedAt: timestamp("finished_at", { withTimezone: true }),
  },
  (t) => [
    index("renders_project_idx").on(t.projectId, t.createdAt),
    index("renders_scene_idx").on(t.sceneId),
    index("renders_version_idx").on(t.versionId),
  ],
);

// A pool render is split into chunks of sample passes; each chunk's partial accumulation is stored.
export const renderChunks = pgTable(
  "render_chunks",
  {
    renderId: uuid("render_id").notNull().references(() => renders.id, { onDelete: "cascade" }),
    index: integer("index").notNull(),
    passStart: integer("pass_start").notNull(),
    passEnd: integer("pass_end").notNull(),
    status: chunkStatus("status").notNull().default("pending"),
    objectKey: text("object_key"),
    worker: text("worker"),
    attempts: integer("attempts").notNull().default(0),
    updatedAt: timestamp("updated_at", { withTimezone: true }).notNull().defaultNow(),
  },
  (t) => [primaryKey({ columns: [t.renderId, t.index] })],
);

// ---------- assets ----------
// Blobs are stored once by content hash; a project sees the assets it uploaded or imported.
export const assets = pgTable(
  "assets",
  {
    projectId: uuid("project_id").notNull().references(() => projects.id, { onDelete: "cascade" }),
    sha256: text("sha256").notNull(),
    name: text("name").notNull(),
    kind: assetKind("kind").notNull(),
    bytes: integer("bytes").notNull(),
    facts: jsonb("facts").$type<Record<string, unknown>>().notNull().default({}),
    uploadedBy: uuid("uploaded_by").references(() => users.id, { onDelete: "set null" }),
    createdAt: createdAt(),
  },
  (t) => [primaryKey({ columns: [t.projectId, t.sha256] })],
);

// ---------- staged uploads ----------
// A large file travels in steps: the browser declares what it will send (a row here, "pending"), streams
// each file to a staging key, then asks to finish; only then does a render or asset appear. A pending row
// that is never finished is swept (marked "failed", its staged objects deleted) after a while.
export const uploadKind = pgEnum("upload_kind", ["render", "asset"]);
export const uploadStatus = pgEnum("upload_status", ["pending", "finished", "failed"]);

export const uploads = pgTable(
  "uploads",
  {
    id: uuid("id").primaryKey().defaultRandom(),
    projectId: uuid("project_id").notNull().references(() => projects.id, { onDelete: "cascade" }),
    kind: uploadKind("kind").notNull(),
    status: uploadStatus("status").notNull().default("pending"),
    // What the browser declared when it started: the files (slot, name, bytes, sha256) and, for a render,
    // its scene and metadata. Checked against limits before any byte is accepted.
    plan: jsonb("plan").$type<Record<string, unknown>>().notNull(),
    // What actually arrived, per slot (bytes counted and SHA-256 computed while streaming); merged per file.
    received: jsonb("received").$type<Record<string, unknown>>().notNull().default({}),
    // The render id or asset sha256 it became.
    resultId: text("result_id"),
    error: text("error"),
    createdBy: uuid("created_by").references(() => users.id, { onDelete: "set null" }),
    createdAt: createdAt(),
    finishedAt: timestamp("finished_at", { withTimezone: true }),
  },
  (t) => [index("uploads_status_idx").on(t.status, t.createdAt), index("uploads_project_idx").on(t.projectId)],
);

// ---------- share links ----------
export const shareLinks = pgTable(
  "share_links",
  {
    id: uuid("id").primaryKey().defaultRandom(),
    projectId: uuid("project_id").notNull().references(() => projects.id, { onDelete: "cascade" }),
    versionId: uuid("version_id").notNull().references(() => sceneVersions.id, { onDelete: "cascade" }),
    // A random capability token; kept readable so owners and editors can copy the link again.
    token: text("token").notNull().unique(),
    label: text("label").notNull().default(""),
    createdBy: uuid("created_by").references(() => users.id, { onDelete: "set null" }),
    expiresAt: timestamp("expires_at", { withTimezone: true }),
    revokedAt: timestamp("revoked_at", { withTimezone: true }),
    includeRenders: boolean("include_renders").notNull().default(true),
    createdAt: createdAt(),
  },
  (t) => [index("share_links_project_idx").on(t.projectId)],
);

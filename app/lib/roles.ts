// The access model in one table. Pure data so the server (permissions.server.ts), the members page and the
// unit tests all read the same thing; nothing here touches the database.
export const ROLES = ["owner", "editor", "viewer"] as const;
export type Role = (typeof ROLES)[number];

export const ABILITIES = ["view", "render", "edit", "publish", "upload", "manage", "delete"] as const;
export type Ability = (typeof ABILITIES)[number];

export const TOKEN_SCOPES = ["read", "render"] as const;
export type TokenScope = (typeof TOKEN_SCOPES)[number];

/**
 * What each ability lets someone do in a project:
 * - view:    open the project, its scenes, versions, diffs, comparisons and renders; download files;
 *            render in their own browser (that never leaves their machine, so it needs nothing more).
 * - render:  keep a render in the project's library and queue renders on the server pool.
 * - edit:    create scenes, save, fork and restore versions.
 * - publish: create and revoke share links that show a version outside the team.
 * - upload:  add meshes and environment maps to the project's assets.
 * - manage:  invite people, change roles, remove members, read the activity log, rename the project.
 * - delete:  delete the project and everything in it.
 */
export const ROLE_ABILITIES: Record<Role, readonly Ability[]> = {
  owner: ["view", "render", "edit", "publish", "upload", "manage", "delete"],
  editor: ["view", "render", "edit", "publish", "upload"],
  viewer: ["view"],
};

/**
 * API tokens act for their person but never beyond their scope, and never manage or delete anything:
 * a leaked pipeline token must not be able to change who is on a project.
 * - read:   look at and download (view).
 * - render: read, plus submit versions and queue renders (what a render pipeline needs).
 */
export const TOKEN_SCOPE_ABILITIES: Record<TokenScope, readonly Ability[]> = {
  read: ["view"],
  render: ["view", "render", "edit"],
};

export function roleAllows(role: Role, ability: Ability): boolean {
  return ROLE_ABILITIES[role].includes(ability);
}

export function scopeAllows(scope: TokenScope, ability: Ability): boolean {
  return TOKEN_SCOPE_ABILITIES[scope].includes(ability);
}

/** How the members page explains each role, in the team's own words. */
export const ROLE_DESCRIPTIONS: Record<Role, { label: string; summary: string }> = {
  owner: {
    label: "Owner",
    summary: "Everything an editor can do, plus inviting people, changing roles, removing members, reading the activity log and deleting the project.",
  },
  editor: {
    label: "Editor",
    summary: "Edits scenes and saves versions, keeps renders and queues them on the server, publishes share links and uploads meshes and environment maps.",
  },
  viewer: {
    label: "Viewer",
    summary: "Sees every scene, version and render, renders in their own browser, compares versions and downloads files. Changes nothing.",
  },
};

export const SCOPE_DESCRIPTIONS: Record<TokenScope, string> = {
  read: "Read: list and download scenes, versions and renders.",
  render: "Read and render: also submit scene versions and queue renders on the server pool.",
};

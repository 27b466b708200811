// The role → ability table against the product owner's definition of the roles (issue 5: "owner (everything,
// including members and deletion), editor (edit scenes, render, publish, upload), viewer (see, render locally,
// compare, download)") and the token scopes ("read, or read and render"; tokens never manage).
import { describe, expect, it } from "vitest";
import { ABILITIES, ROLE_ABILITIES, ROLES, roleAllows, scopeAllows, TOKEN_SCOPE_ABILITIES, TOKEN_SCOPES, type Ability, type Role } from "~/lib/roles";
import { safeNext } from "~/lib/safe-next";
import { accountDelaySeconds, addressDelaySeconds, THROTTLE } from "~/services/auth.server";

const expected: Record<Role, Record<Ability, boolean>> = {
  owner: { view: true, render: true, edit: true, publish: true, upload: true, manage: true, delete: true },
  editor: { view: true, render: true, edit: true, publish: true, upload: true, manage: false, delete: false },
  // Rendering in one's own browser needs only "view"; "render" is keeping renders and using the server pool.
  viewer: { view: true, render: false, edit: false, publish: false, upload: false, manage: false, delete: false },
};

describe("role table", () => {
  for (const role of ROLES) {
    for (const ability of ABILITIES) {
      it(`${role} ${expected[role][ability] ? "may" : "may not"} ${ability}`, () => {
        expect(roleAllows(role, ability)).toBe(expected[role][ability]);
      });
    }
  }

  it("each role includes everything the role below it may do", () => {
    const below: [Role, Role][] = [
      ["viewer", "editor"],
      ["editor", "owner"],
    ];
    for (const [lower, higher] of below) {
      for (const a of ROLE_ABILITIES[lower]) expect(ROLE_ABILITIES[higher]).toContain(a);
    }
  });

  it("only owners manage members or delete", () => {
    expect(ROLES.filter((r) => roleAllows(r, "manage"))).toEqual(["owner"]);
    expect(ROLES.filter((r) => roleAllows(r, "delete"))).toEqual(["owner"]);
  });
});

describe("token scopes", () => {
  it("read tokens only view", () => {
    expect(ABILITIES.filter((a) => scopeAllows("read", a))).toEqual(["view"]);
  });

  it("render tokens view, render and submit versions, nothing more", () => {
    expect(ABILITIES.filter((a) => scopeAllows("render", a))).toEqual(["view", "render", "edit"]);
  });

  it("no token scope manages, deletes, publishes or uploads", () => {
    for (const scope of TOKEN_SCOPES) {
      for (const a of ["manage", "delete", "publish", "upload"] as const) expect(TOKEN_SCOPE_ABILITIES[scope]).not.toContain(a);
    }
  });
});

describe("where to go after signing in", () => {
  it("keeps same-site paths and drops everything else", () => {
    expect(safeNext("/projects/abc?x=1")).toBe("/projects/abc?x=1");
    expect(safeNext("//evil.example/")).toBe("/projects");
    expect(safeNext("/\\evil.example")).toBe("/projects");
    expect(safeNext("https://evil.example/")).toBe("/projects");
    expect(safeNext("/ok\r\nSet-Cookie: x")).toBe("/projects");
    expect(safeNext(null)).toBe("/projects");
  });
});

describe("sign-in throttling policy", () => {
  it("lets a few mistakes pass, then imposes growing waits, then locks", () => {
    const waits = Array.from({ length: 11 }, (_, i) => accountDelaySeconds(i));
    expect(waits.slice(0, THROTTLE.accountSlowAfter)).toEqual([0, 0, 0]);
    for (let f = THROTTLE.accountSlowAfter + 1; f < THROTTLE.accountLockAfter; f++) expect(waits[f]).toBeGreaterThanOrEqual(waits[f - 1]);
    expect(accountDelaySeconds(THROTTLE.accountLockAfter)).toBe(THROTTLE.lockMinutes * 60);
  });

  it("is more lenient per network than per account (several people share an office address)", () => {
    expect(THROTTLE.addressSlowAfter).toBeGreaterThan(THROTTLE.accountSlowAfter);
    expect(addressDelaySeconds(THROTTLE.addressSlowAfter - 1)).toBe(0);
    expect(addressDelaySeconds(THROTTLE.addressSlowAfter)).toBeGreaterThan(0);
    expect(addressDelaySeconds(THROTTLE.addressLockAfter)).toBe(THROTTLE.lockMinutes * 60);
  });
});

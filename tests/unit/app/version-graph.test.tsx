// @vitest-environment jsdom
// The version graph draws every version, marks the head, arcs restores back to their source and links forks.
import { cleanup, render, screen } from "@testing-library/react";
import { createRoutesStub } from "react-router";
import { afterEach, describe, expect, it } from "vitest";
import { VersionGraph, type GraphVersion } from "~/components/scene/version-graph";

afterEach(cleanup);

const v = (n: number, kind = "save", sourceVersionId: string | null = null): GraphVersion => ({
  id: `v${n}`,
  number: n,
  kind,
  parentId: n > 1 ? `v${n - 1}` : null,
  sourceVersionId,
  message: `message ${n}`,
});

function show(props: Parameters<typeof VersionGraph>[0]) {
  const Stub = createRoutesStub([{ path: "/", Component: () => <VersionGraph {...props} /> }]);
  return render(<Stub initialEntries={["/"]} />);
}

describe("VersionGraph", () => {
  it("draws one node per version, a restore arc, the origin and a fork", () => {
    const { container } = show({
      versions: [v(3, "restore", "v1"), v(2), v(1, "fork")],
      headId: "v3",
      origin: { label: "Studio / Kettle v4", href: "/projects/p/scenes/s/history", versionId: "o4" },
      forks: [{ label: "Catalogue / Kettle (fork)", href: "/projects/q/scenes/t/history", versionId: "v2" }],
      versionHref: (x) => `/open/${x.id}`,
    });
    expect(container.querySelectorAll("circle[r='11']")).toHaveLength(3);
    expect(screen.getByLabelText("Version 3: message 3").getAttribute("href")).toBe("/open/v3");
    expect(container.querySelectorAll("path[stroke-dasharray='4 3']")).toHaveLength(1); // one restore
    expect(container.querySelector("title")?.textContent ?? "").toMatch(/v\d/);
    expect(screen.getByText(/forked from Studio \/ Kettle v4/)).toBeTruthy();
    expect(screen.getByText("Catalogue / Kettle (fork)").closest("a")?.getAttribute("href")).toBe("/projects/q/scenes/t/history");
    // Versions run oldest to newest, left to right.
    const xs = ["v1", "v2", "v3"].map((id) => Number(screen.getByLabelText(new RegExp(`Version ${id.slice(1)}:`)).querySelector("circle")!.getAttribute("cx")));
    expect(xs[0]).toBeLessThan(xs[1]!);
    expect(xs[1]).toBeLessThan(xs[2]!);
  });
});

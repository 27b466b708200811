// @vitest-environment jsdom
import { act, cleanup, fireEvent, render, screen } from "@testing-library/react";
import { afterEach, describe, expect, it } from "vitest";
import { validateScene } from "@tracer/scene/validate";
import { WorkspaceProvider } from "~/components/workspace/context";
import { SceneForms } from "~/components/workspace/scene-forms";
import { valueAtPath } from "~/lib/workspace-json";
import { createWorkspaceStore } from "~/stores/workspace";
import { kettleText } from "./fixture";

afterEach(cleanup);

function setup(canEdit = true) {
  const store = createWorkspaceStore({ sceneId: "s", canEdit, base: { id: "v1", number: 1, text: kettleText } }, { validate: validateScene });
  render(
    <WorkspaceProvider value={store}>
      <SceneForms />
    </WorkspaceProvider>,
  );
  return store;
}

describe("scene forms", () => {
  it("typing a light's power writes it into the JSON; an editor change shows in the form", () => {
    const store = setup();
    const power = screen.getByLabelText("Light key: Power (W)") as HTMLInputElement;
    expect(power.value).toBe("40");
    fireEvent.change(power, { target: { value: "65" } });
    expect(valueAtPath(store.getState().text, ["lights", 0, "power"])).toBe(65);

    act(() => store.getState().edit(store.getState().text.replace('"power": 65', '"power": 12.5'), { source: "editor", label: "typing" }));
    expect((screen.getByLabelText("Light key: Power (W)") as HTMLInputElement).value).toBe("12.5");
  });

  it("switching a light from radiance to power keeps its brightness (power = radiance · π · area)", () => {
    const store = setup();
    fireEvent.change(screen.getByLabelText("Light fill: Strength given as"), { target: { value: "power" } });
    const light = valueAtPath(store.getState().text, ["lights", 1]) as Record<string, unknown>;
    expect(light.radiance).toBeUndefined();
    // disk radius 0.3: area π·0.09; radiance [2, 2, 2.4] → power = L · π · A (scene format 1: radiance = power / (π · area))
    const area = Math.PI * 0.09;
    expect(light.power).toEqual([2, 2, 2.4].map((l) => Number((l * Math.PI * area).toPrecision(6))));
    store.getState().undo();
    expect(valueAtPath(store.getState().text, ["lights", 1, "radiance"])).toEqual([2, 2, 2.4]);
  });

  it("an out-of-range value is kept and flagged with the validator's message", () => {
    const store = setup();
    fireEvent.change(screen.getByLabelText("Light fill: Radius (m)"), { target: { value: "-1" } });
    expect(valueAtPath(store.getState().text, ["lights", 1, "shape", "radius"])).toBe(-1);
    expect(store.getState().issues.map((i) => i.path)).toContain("lights[1].shape.radius");
    expect(screen.getAllByRole("alert").some((n) => /must be/.test(n.textContent ?? ""))).toBe(true);
  });

  it("is read-only for people who cannot edit", () => {
    setup(false);
    expect((screen.getByLabelText("Light key: Power (W)") as HTMLInputElement).disabled).toBe(true);
  });
});

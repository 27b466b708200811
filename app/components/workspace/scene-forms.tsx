/**
 * Forms for the everyday edits: camera, each light, each material, render and display settings. They edit
 * the same JSON text as the editor (see fields.tsx), so either view can be used at any moment.
 *
 * Each section is memoised and reads only its own slice of the parsed scene (the store keeps unchanged
 * slices' identity from one parse to the next), so a keystroke re-renders the section it changed, not the
 * whole tree. The outer list re-renders only when the lights, material ids or group names change.
 */
import { createContext, memo, Profiler, useContext, type ProfilerOnRenderCallback } from "react";
import { useShallow } from "zustand/react/shallow";
import { Notice } from "~/components/ui";
import { getIn, valueAtPath, type PathSegment } from "~/lib/workspace-json";
import {
  defaultLightShape,
  defaultMaterial,
  emitterArea,
  powerToRadiance,
  radianceToPower,
  shapeCenter,
  shapeSize,
  type V3,
} from "~/lib/workspace-lights";
import type { WorkspaceState } from "~/stores/workspace";
import { useWorkspace, useWorkspaceStore } from "./context";
import { CheckField, ChoiceField, NumberField, SelectField, TextField, TripleField, useIssueAt, useSceneValue } from "./fields";

function Section({ title, children, open = false, testId }: { title: React.ReactNode; children: React.ReactNode; open?: boolean; testId?: string }) {
  return (
    <details open={open} className="group rounded border border-line bg-panel" data-testid={testId}>
      <summary className="flex cursor-pointer list-none items-center justify-between px-3 py-2 text-xs font-medium tracking-wide text-ink hover:bg-raised">
        <span>{title}</span>
        <span aria-hidden className="text-ink-faint group-open:rotate-90">›</span>
      </summary>
      <div className="flex flex-col gap-2.5 border-t border-line px-3 py-2.5">{children}</div>
    </details>
  );
}

function Row({ children }: { children: React.ReactNode }) {
  return <div className="grid grid-cols-2 gap-2">{children}</div>;
}

const NO_NAMES: string[] = [];

const isObject = (v: unknown): v is Record<string, unknown> => v !== null && typeof v === "object" && !Array.isArray(v);

const lightCountOf = (s: WorkspaceState) => {
  const l = getIn(s.parsed, ["lights"]);
  return Array.isArray(l) ? l.length : 0;
};

const materialIdsOf = (s: WorkspaceState) => {
  const m = getIn(s.parsed, ["materials"]);
  return isObject(m) ? Object.keys(m) : NO_NAMES;
};

const groupNamesOf = (s: WorkspaceState) => {
  const lights = getIn(s.parsed, ["lights"]);
  if (!Array.isArray(lights)) return NO_NAMES;
  return [...new Set(lights.map((l) => (isObject(l) ? l.group : undefined)).filter((g): g is string => typeof g === "string"))];
};

/** Set when a caller asks to see which sections re-render (measuring); each section then reports through a Profiler. */
const SectionRenderContext = createContext<ProfilerOnRenderCallback | undefined>(undefined);

/** Sits inside each memoised section, so it reports only when that section itself renders. */
function Measured({ id, children }: { id: string; children: React.ReactNode }) {
  const onRender = useContext(SectionRenderContext);
  return onRender ? (
    <Profiler id={id} onRender={onRender}>
      {children}
    </Profiler>
  ) : (
    <>{children}</>
  );
}

export function SceneForms({ onSectionRender }: { onSectionRender?: ProfilerOnRenderCallback } = {}) {
  const isScene = useWorkspace((s) => isObject(s.parsed));
  const issueCount = useWorkspace((s) => s.issues.length);
  const lightCount = useWorkspace(lightCountOf);
  const materials = useWorkspace(useShallow(materialIdsOf));
  const groups = useWorkspace(useShallow(groupNamesOf));
  if (!isScene) {
    return (
      <div className="p-3">
        <Notice tone="warn">The JSON has a syntax error, so the forms are paused. Fix it in the editor (the error is marked there).</Notice>
      </div>
    );
  }
  return (
    <SectionRenderContext.Provider value={onSectionRender}>
      <div className="flex flex-col gap-2 p-2" data-testid="scene-forms">
        {issueCount > 0 ? <Notice tone="warn">{issueCount === 1 ? "One problem" : `${issueCount} problems`} in the scene: the preview shows the last valid version.</Notice> : null}
        <CameraForm />
        <Section title={`Lights (${lightCount})`} open testId="lights-forms">
          {lightCount === 0 ? <p className="text-xs text-ink-faint">No lights: the environment lights the scene.</p> : null}
          {Array.from({ length: lightCount }, (_, i) => (
            <LightForm key={i} index={i} />
          ))}
          <datalist id="light-groups">
            {groups.map((g) => (
              <option key={g} value={g} />
            ))}
          </datalist>
        </Section>
        <Section title={`Materials (${materials.length})`}>
          {materials.map((id) => (
            <MaterialForm key={id} id={id} />
          ))}
        </Section>
        <RenderForm />
        <DisplayForm />
      </div>
    </SectionRenderContext.Provider>
  );
}

const CameraForm = memo(function CameraForm() {
  const c = "camera";
  return (
    <Measured id="camera">
      <Section title="Camera" testId="camera-form">
        <TripleField path={["camera", "position"]} label="Position" unit="m" context={c} kind="vector" />
        <TripleField path={["camera", "target"]} label="Looks at" unit="m" context={c} kind="vector" />
        <Row>
          <NumberField path={["camera", "fovY"]} label="Vertical view" unit="°" context={c} min={1} max={179} />
          <NumberField path={["camera", "aperture"]} label="Lens radius" unit="m" context={c} min={0} hint="0 = pinhole" />
        </Row>
        <NumberField path={["camera", "focusDistance"]} label="Focus distance" unit="m" context={c} hint="Empty: distance to the point looked at" />
      </Section>
    </Measured>
  );
});

const LightForm = memo(function LightForm({ index }: { index: number }) {
  const light = useWorkspace((s) => getIn(s.parsed, ["lights", index]));
  return (
    <Measured id={`light-${index}`}>
      <LightFields index={index} light={light} />
    </Measured>
  );
});

function LightFields({ index, light }: { index: number; light: unknown }) {
  const store = useWorkspaceStore();
  const base: PathSegment[] = ["lights", index];
  const l = isObject(light) ? light : {};
  const id = typeof l.id === "string" ? l.id : `#${index + 1}`;
  const ctx = `Light ${id}`;
  const issue = useIssueAt(base, false);
  const shape = useSceneValue([...base, "shape"]);
  const shapeType = shape && typeof shape === "object" ? ((shape as Record<string, unknown>).type as "rect" | "disk" | "sphere" | undefined) : undefined;
  const mode: "radiance" | "power" = l.power !== undefined ? "power" : "radiance";
  const area = emitterArea(shape);

  const setMode = (next: "radiance" | "power") => {
    if (next === mode) return;
    const s = store.getState();
    // From the text itself: the forms' parse of a big scene may trail the latest keystroke by a moment.
    const cur = (valueAtPath(s.text, base) ?? {}) as Record<string, unknown>;
    const a = emitterArea(cur.shape) ?? 1;
    const changes =
      next === "power"
        ? [
            { path: [...base, "radiance"], value: undefined },
            { path: [...base, "power"], value: Array.isArray(cur.radiance) ? radianceToPower(cur.radiance as V3, a) : 10 },
          ]
        : [
            { path: [...base, "power"], value: undefined },
            { path: [...base, "radiance"], value: cur.power !== undefined ? powerToRadiance(cur.power as number | V3, a) : [1, 1, 1] },
          ];
    s.editPaths(changes, { label: `${ctx}: emit by ${next}` });
  };

  const setShapeType = (t: "rect" | "disk" | "sphere") => {
    const cur = valueAtPath(store.getState().text, [...base, "shape"]);
    store.getState().editPaths([{ path: [...base, "shape"], value: defaultLightShape(t, shapeCenter(cur), shapeSize(cur)) }], { label: `${ctx}: shape ${t}` });
  };

  if (l.type === "point") {
    return (
      <fieldset className="flex flex-col gap-2 rounded border border-line/70 p-2" data-testid={`light-${id}`}>
        <legend className="px-1 text-xs font-medium text-ink">
          {id} <span className="text-ink-faint">· point</span>
        </legend>
        <TripleField path={[...base, "position"]} label="Position" unit="m" context={ctx} kind="vector" />
        <TripleField path={[...base, "intensity"]} label="Intensity" unit="W/sr" context={ctx} kind="colour" />
        <TextField path={[...base, "group"]} label="Group" context={ctx} list="light-groups" />
        {issue ? <p className="text-[11px] text-danger">{issue}</p> : null}
      </fieldset>
    );
  }

  return (
    <fieldset className="flex flex-col gap-2 rounded border border-line/70 p-2" data-testid={`light-${id}`}>
      <legend className="px-1 text-xs font-medium text-ink">
        {id} <span className="text-ink-faint">· area{area ? ` · ${Number(area.toPrecision(3))} m²` : ""}</span>
      </legend>
      <Row>
        <SelectField
          label="Shape"
          context={ctx}
          value={shapeType}
          options={[
            { value: "rect", label: "Rectangle" },
            { value: "disk", label: "Disk" },
            { value: "sphere", label: "Sphere" },
          ]}
          onChange={setShapeType}
        />
        <SelectField
          label="Strength given as"
          context={ctx}
          value={mode}
          options={[
            { value: "power", label: "Power (W)" },
            { value: "radiance", label: "Radiance" },
          ]}
          onChange={setMode}
        />
      </Row>
      <TripleField path={[...base, "shape", "center"]} label="Centre" unit="m" context={ctx} kind="vector" />
      {shapeType === "rect" ? (
        <>
          <TripleField path={[...base, "shape", "u"]} label="Edge u" unit="m" context={ctx} kind="vector" />
          <TripleField path={[...base, "shape", "v"]} label="Edge v" unit="m" context={ctx} kind="vector" />
        </>
      ) : null}
      {shapeType === "disk" ? (
        <>
          <NumberField path={[...base, "shape", "radius"]} label="Radius" unit="m" context={ctx} min={0} />
          <TripleField path={[...base, "shape", "normal"]} label="Facing" context={ctx} kind="vector" />
        </>
      ) : null}
      {shapeType === "sphere" ? <NumberField path={[...base, "shape", "radius"]} label="Radius" unit="m" context={ctx} min={0} /> : null}
      {mode === "power" ? (
        typeof l.power === "number" || l.power === undefined ? (
          <NumberField path={[...base, "power"]} label="Power" unit="W" context={ctx} min={0} />
        ) : (
          <TripleField path={[...base, "power"]} label="Power" unit="W" context={ctx} kind="colour" />
        )
      ) : (
        <TripleField path={[...base, "radiance"]} label="Radiance" unit="W·sr⁻¹·m⁻²" context={ctx} kind="colour" />
      )}
      <Row>
        <TextField path={[...base, "group"]} label="Group" context={ctx} list="light-groups" />
        <div className="flex items-end pb-1">
          <CheckField path={[...base, "visible"]} label="Seen by camera" context={ctx} fallback />
        </div>
      </Row>
      {issue ? <p className="text-[11px] text-danger">{issue}</p> : null}
    </fieldset>
  );
}

const MaterialForm = memo(function MaterialForm({ id }: { id: string }) {
  const store = useWorkspaceStore();
  const base: PathSegment[] = ["materials", id];
  const m = useSceneValue(base);
  const type = m && typeof m === "object" ? ((m as Record<string, unknown>).type as "diffuse" | "metal" | "glass" | undefined) : undefined;
  const ctx = `Material ${id}`;
  return (
    <Measured id={`material-${id}`}>
      <fieldset className="flex flex-col gap-2 rounded border border-line/70 p-2" data-testid={`material-${id}`}>
        <legend className="px-1 text-xs font-medium text-ink">{id}</legend>
        <SelectField
          label="Kind"
          context={ctx}
          value={type}
          options={[
            { value: "diffuse", label: "Matte (diffuse)" },
            { value: "metal", label: "Metal" },
            { value: "glass", label: "Glass" },
          ]}
          onChange={(t) => store.getState().editPaths([{ path: base, value: defaultMaterial(t) }], { label: `${ctx}: kind ${t}` })}
        />
        {type === "diffuse" ? <TripleField path={[...base, "albedo"]} label="Albedo" context={ctx} kind="colour" /> : null}
        {type === "metal" ? (
          <>
            <TripleField path={[...base, "reflectance"]} label="Reflectance" context={ctx} kind="colour" />
            <NumberField path={[...base, "roughness"]} label="Roughness" context={ctx} min={0} max={1} hint="0 = mirror" />
          </>
        ) : null}
        {type === "glass" ? (
          <>
            <Row>
              <NumberField path={[...base, "ior"]} label="Index of refraction" context={ctx} min={1} max={4} />
              <NumberField path={[...base, "roughness"]} label="Roughness" context={ctx} min={0} max={1} />
            </Row>
            <TripleField path={[...base, "absorption"]} label="Absorption" unit="per m" context={ctx} kind="colour" />
          </>
        ) : null}
      </fieldset>
    </Measured>
  );
});

const RenderForm = memo(function RenderForm() {
  const ctx = "Render";
  return (
    <Measured id="render">
      <Section title="Render" testId="render-form">
        <Row>
          <NumberField path={["image", "width"]} label="Width" unit="px" context="Image" min={1} />
          <NumberField path={["image", "height"]} label="Height" unit="px" context="Image" min={1} />
        </Row>
        <Row>
          <NumberField path={["render", "spp"]} label="Samples per pixel" context={ctx} min={1} />
          <NumberField path={["render", "maxDepth"]} label="Max bounces" context={ctx} min={1} />
        </Row>
        <Row>
          <ChoiceField
            label="Method"
            context={ctx}
            path={["render", "integrator"]}
            fallback="path"
            options={[
              { value: "path", label: "Path tracing" },
              { value: "whitted", label: "Mirror and glass only" },
              { value: "direct", label: "Direct light only" },
            ]}
          />
          <NumberField path={["render", "seed"]} label="Seed" context={ctx} min={0} />
        </Row>
        <NumberField path={["render", "clamp"]} label="Sample clamp" context={ctx} min={0} hint="0 = off; above 0 trims fireflies (biased)" />
      </Section>
    </Measured>
  );
});

export const DisplayForm = memo(function DisplayForm({ open = false }: { open?: boolean }) {
  return (
    <Measured id="display">
      <Section title="Display" open={open} testId="display-form">
        <DisplayFields />
      </Section>
    </Measured>
  );
});

/** Exposure and tone map live in the scene's display block, so the look travels with the scene. */
export function DisplayFields() {
  const ctx = "Display";
  return (
    <Row>
      <NumberField path={["display", "exposure"]} label="Exposure" unit="stops" context={ctx} step={0.5} />
      <ChoiceField
        label="Tone map"
        context={ctx}
        path={["display", "toneMap"]}
        fallback="none"
        options={[
          { value: "none", label: "None (clip)" },
          { value: "reinhard", label: "Reinhard" },
          { value: "filmic", label: "Filmic" },
        ]}
      />
    </Row>
  );
}

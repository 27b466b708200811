/**
 * Form fields that read and write one value of the scene JSON by path. Each keystroke that forms a valid
 * number is written at once (quick successive changes to one field merge into one undo step), so the
 * editor, the preview and the forms never disagree. Out-of-range values are written too and flagged with
 * the validator's message, exactly as if typed in the editor, so nothing typed is ever thrown away.
 */
import { useEffect, useId, useState } from "react";
import { cx, inputClass } from "~/components/ui";
import { formatIssuePath, getIn, type PathSegment } from "~/lib/workspace-json";
import { useWorkspace, useWorkspaceStore } from "./context";

export function useSceneValue(path: readonly PathSegment[]): unknown {
  return useWorkspace((s) => getIn(s.parsed, path));
}

export function useIssueAt(path: readonly PathSegment[], exact = true): string | undefined {
  const key = formatIssuePath(path);
  return useWorkspace((s) => {
    const hit = s.issues.find((i) => (exact ? i.path === key : i.path === key || i.path.startsWith(key + ".") || i.path.startsWith(key + "[")));
    return hit ? (exact || hit.path === key ? hit.message : `${hit.path.slice(key.length).replace(/^\./, "")}: ${hit.message}`) : undefined;
  });
}

export function useEditPath() {
  const store = useWorkspaceStore();
  return (path: readonly PathSegment[], value: unknown, label: string, coalesce = true) =>
    store.getState().editPaths([{ path, value }], { label, coalesceKey: coalesce ? formatIssuePath(path) : undefined });
}

const smallInput = cx(inputClass, "h-7 px-1.5 text-xs tabular-nums");

function NumberBox({
  path,
  label,
  ariaLabel,
  step,
  min,
  max,
  disabled,
  onValue,
}: {
  path: readonly PathSegment[];
  label: string;
  ariaLabel: string;
  step?: number;
  min?: number;
  max?: number;
  disabled?: boolean;
  onValue?: (v: number) => void;
}) {
  const raw = useSceneValue(path);
  const value = typeof raw === "number" ? raw : undefined;
  const [draft, setDraft] = useState<string | null>(null);
  const edit = useEditPath();
  const canEdit = useWorkspace((s) => s.canEdit);
  const issue = useIssueAt(path);
  const id = useId();
  // An outside change (undo, the editor, another field) replaces a stale draft.
  useEffect(() => {
    if (draft !== null && Number(draft) !== value) setDraft(null);
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [value]);
  const shown = draft ?? (value === undefined ? "" : String(value));
  const bad = draft !== null && draft.trim() !== "" && !Number.isFinite(Number(draft));
  return (
    <label htmlFor={id} className="flex min-w-0 flex-1 flex-col gap-0.5">
      <span className="text-[11px] text-ink-faint">{label}</span>
      <input
        id={id}
        className={smallInput}
        inputMode="decimal"
        type="text"
        aria-label={ariaLabel}
        aria-invalid={Boolean(issue) || bad}
        title={issue ?? (bad ? "not a number" : undefined)}
        value={shown}
        step={step}
        min={min}
        max={max}
        disabled={disabled || !canEdit}
        placeholder={value === undefined ? "default" : undefined}
        onChange={(e) => {
          const s = e.target.value;
          setDraft(s);
          const n = Number(s);
          if (s.trim() !== "" && Number.isFinite(n)) {
            if (onValue) onValue(n);
            else edit(path, n, ariaLabel);
          }
        }}
        onBlur={() => setDraft(null)}
      />
    </label>
  );
}

export function NumberField(props: {
  path: readonly PathSegment[];
  label: string;
  context: string;
  unit?: string;
  step?: number;
  min?: number;
  max?: number;
  hint?: string;
  disabled?: boolean;
  onValue?: (v: number) => void;
}) {
  const issue = useIssueAt(props.path);
  const label = props.unit ? `${props.label} (${props.unit})` : props.label;
  return (
    <div className="flex flex-col gap-0.5">
      <NumberBox path={props.path} label={label} ariaLabel={`${props.context}: ${label}`} step={props.step} min={props.min} max={props.max} disabled={props.disabled} onValue={props.onValue} />
      {issue ? <FieldIssue text={issue} /> : props.hint ? <p className="text-[11px] text-ink-faint">{props.hint}</p> : null}
    </div>
  );
}

export function FieldIssue({ text }: { text: string }) {
  return (
    <p role="alert" className="text-[11px] text-danger">
      {text}
    </p>
  );
}

const AXES = ["x", "y", "z"] as const;
const CHANNELS = ["r", "g", "b"] as const;

export function TripleField({
  path,
  label,
  context,
  kind,
  unit,
}: {
  path: readonly PathSegment[];
  label: string;
  context: string;
  kind: "vector" | "colour";
  unit?: string;
}) {
  const issue = useIssueAt(path, false);
  const raw = useSceneValue(path);
  const names = kind === "vector" ? AXES : CHANNELS;
  const full = unit ? `${label} (${unit})` : label;
  const swatch =
    kind === "colour" && Array.isArray(raw) && raw.length === 3 && raw.every((v) => typeof v === "number") ? swatchCss(raw as number[]) : null;
  return (
    <fieldset className="flex flex-col gap-0.5">
      <legend className="mb-0.5 flex items-center gap-1.5 text-xs text-ink-muted">
        {swatch ? <span aria-hidden className="inline-block h-3 w-3 rounded-sm border border-line" style={{ background: swatch }} /> : null}
        {full}
      </legend>
      <div className="flex gap-1">
        {names.map((n, i) => (
          <NumberBox key={n} path={[...path, i]} label={n} ariaLabel={`${context}: ${label} ${n}`} />
        ))}
      </div>
      {issue ? <FieldIssue text={issue} /> : null}
    </fieldset>
  );
}

/** Linear RGB → a CSS colour for the swatch (sRGB transfer, values above 1 scaled down to show hue). */
function swatchCss(rgb: number[]): string {
  const m = Math.max(1, ...rgb);
  const enc = (x: number) => {
    const v = Math.max(0, x / m);
    const s = v <= 0.0031308 ? 12.92 * v : 1.055 * Math.pow(v, 1 / 2.4) - 0.055;
    return Math.round(Math.min(1, s) * 255);
  };
  return `rgb(${enc(rgb[0]!)} ${enc(rgb[1]!)} ${enc(rgb[2]!)})`;
}

export function SelectField<T extends string>({
  label,
  context,
  value,
  options,
  onChange,
  path,
}: {
  label: string;
  context: string;
  value: T | undefined;
  options: readonly { value: T; label: string }[];
  onChange: (v: T) => void;
  path?: readonly PathSegment[];
}) {
  const id = useId();
  const canEdit = useWorkspace((s) => s.canEdit);
  const issue = useIssueAt(path ?? ["__none__"]);
  return (
    <div className="flex flex-col gap-0.5">
      <label htmlFor={id} className="text-[11px] text-ink-faint">
        {label}
      </label>
      <select id={id} aria-label={`${context}: ${label}`} className={cx(smallInput, "pr-6")} value={value ?? ""} disabled={!canEdit} onChange={(e) => onChange(e.target.value as T)}>
        {value === undefined ? <option value="">—</option> : null}
        {options.map((o) => (
          <option key={o.value} value={o.value}>
            {o.label}
          </option>
        ))}
      </select>
      {path && issue ? <FieldIssue text={issue} /> : null}
    </div>
  );
}

export function TextField({ path, label, context, list }: { path: readonly PathSegment[]; label: string; context: string; list?: string }) {
  const raw = useSceneValue(path);
  const value = typeof raw === "string" ? raw : "";
  const edit = useEditPath();
  const canEdit = useWorkspace((s) => s.canEdit);
  const issue = useIssueAt(path);
  const id = useId();
  return (
    <div className="flex flex-col gap-0.5">
      <label htmlFor={id} className="text-[11px] text-ink-faint">
        {label}
      </label>
      <input
        id={id}
        className={smallInput}
        aria-label={`${context}: ${label}`}
        aria-invalid={Boolean(issue)}
        list={list}
        value={value}
        disabled={!canEdit}
        placeholder={raw === undefined ? "default" : undefined}
        onChange={(e) => edit(path, e.target.value, `${context}: ${label}`)}
      />
      {issue ? <FieldIssue text={issue} /> : null}
    </div>
  );
}

export function CheckField({ path, label, context, fallback }: { path: readonly PathSegment[]; label: string; context: string; fallback: boolean }) {
  const raw = useSceneValue(path);
  const value = typeof raw === "boolean" ? raw : fallback;
  const edit = useEditPath();
  const canEdit = useWorkspace((s) => s.canEdit);
  return (
    <label className="flex items-center gap-2 text-xs text-ink-muted">
      <input type="checkbox" aria-label={`${context}: ${label}`} checked={value} disabled={!canEdit} onChange={(e) => edit(path, e.target.checked, `${context}: ${label}`, false)} className="accent-accent" />
      {label}
    </label>
  );
}

/** A choice among fixed strings stored at one path of the scene (the render method, the tone map). */
export function ChoiceField<T extends string>({
  path,
  label,
  context,
  options,
  fallback,
}: {
  path: readonly PathSegment[];
  label: string;
  context: string;
  options: readonly { value: T; label: string }[];
  /** What the scene format uses when the member is absent. */
  fallback: T;
}) {
  const raw = useSceneValue(path);
  const edit = useEditPath();
  const value = typeof raw === "string" ? (raw as T) : fallback;
  return <SelectField label={label} context={context} path={path} value={value} options={options} onChange={(v) => edit(path, v, `${context}: ${label.toLowerCase()} ${v}`, false)} />;
}

/**
 * The workspace's one source of truth: the scene text being edited (the editor and every form write to
 * it), its validation, one undo history shared by all of them, the version the edit started from, and
 * the viewing state (light balance, view mode, resolution scale, noise target) that never touches the JSON.
 *
 * Every edit lands in `text` at once (nothing typed waits for anything); the check against the scene format
 * runs off the main thread through `deps.validate`. At most one check is in flight: when it answers, the
 * newest text (if it changed meanwhile) is checked next, so a burst of keystrokes costs two checks, not one
 * each. An answer counts only if it is for the current revision; older answers are dropped.
 */
import { createStore, type StoreApi } from "zustand/vanilla";
import type { Scene } from "@tracer/scene/schema";
import type { SceneIssue, SceneResult } from "@tracer/scene/validate";
import { writeBackBalance } from "~/lib/workspace-balance";
import { NEUTRAL_BALANCE, type GroupBalance, type ViewMode } from "~/lib/workspace-image";
import { keepUnchanged, prettyJson, setManyAtPaths, type PathSegment } from "~/lib/workspace-json";

export type EditSource = "editor" | "form" | "balance" | "history" | "load" | "conflict";

export type BaseVersion = { id: string; number: number; text: string };

type HistoryEntry = { text: string; label: string };

export type ResolutionScale = 1 | 0.5 | 0.25;
export type { ViewMode };

export type WorkspaceState = {
  sceneId: string;
  canEdit: boolean;
  /** The version this edit started from: a save names it as the parent. */
  base: BaseVersion;
  text: string;
  /** Bumped on every text change; lets the editor tell its own echo from outside changes. */
  revision: number;
  lastSource: EditSource;
  past: HistoryEntry[];
  future: HistoryEntry[];
  /** Parsed JSON of `text` when it is syntactically valid (forms edit it), else null. */
  parsed: unknown;
  /** Problems of the last checked text (the revision in `checkedRevision`). */
  issues: SceneIssue[];
  /** The revision `issues` and `lastGood` describe; differs from `revision` while a check is running. */
  checkedRevision: number;
  /** The scene of the latest text that validated: the preview keeps rendering this while the text is broken. */
  lastGood: { scene: Scene; text: string } | null;
  balances: Record<string, GroupBalance>;
  view: ViewMode;
  scale: ResolutionScale;
  /** Relative standard error at which rendering stops by itself (e.g. 0.02 = 2%); null = run to the target spp. */
  noiseTarget: number | null;
  lastNotice: string | null;

  edit: (text: string, opts: { source: EditSource; label: string; coalesceKey?: string }) => void;
  editPaths: (changes: { path: readonly PathSegment[]; value: unknown }[], opts: { label: string; coalesceKey?: string }) => void;
  undo: () => void;
  redo: () => void;
  setBalance: (group: string, balance: Partial<GroupBalance>) => void;
  resetBalance: (group?: string) => void;
  writeBackBalance: () => { changed: number; notes: string[] };
  setView: (view: ViewMode) => void;
  setScale: (scale: ResolutionScale) => void;
  setNoiseTarget: (t: number | null) => void;
  /** After a successful save: the new version becomes the base; the text stays as typed. */
  markSaved: (version: { id: string; number: number }) => void;
  /** Keep my text but treat `head` as the version it starts from (resolving a conflict by keeping mine). */
  rebaseOnto: (head: BaseVersion) => void;
  /** Take someone else's version as both base and text (undoable: my text stays in the history). */
  takeVersion: (head: BaseVersion, label: string) => void;
};

export type WorkspaceInit = {
  sceneId: string;
  canEdit: boolean;
  base: BaseVersion;
  /** Starting text when it differs from base.text (a restored local draft). */
  text?: string;
  /** The check of the starting text when already known (the server checks the version it sends). */
  check?: SceneResult;
};

export type WorkspaceDeps = {
  /** Checks a text against the scene format (in the browser: in a worker, so it returns a promise). */
  validate: (text: string) => SceneResult | Promise<SceneResult>;
  now?: () => number;
  /** Edits with the same coalesce key within this many ms merge into one undo step (typing, slider drags). */
  coalesceMs?: number;
  historyLimit?: number;
  /**
   * Typing in the editor re-parses the text for the forms after this pause once the text is longer than
   * `aboveChars` (a parse of a scene of a few hundred kilobytes costs tens of milliseconds, too much per key).
   */
  formParseDelay?: { aboveChars: number; ms: number };
};

export type WorkspaceStore = StoreApi<WorkspaceState>;

/**
 * The forms read plain parsed JSON and follow every keystroke. Parts equal to the previous parse keep their
 * identity, so a form section reading its own slice re-renders only when that slice changed.
 */
function parseForForms(text: string, prev: unknown): unknown {
  let parsed: unknown;
  try {
    parsed = JSON.parse(text);
  } catch {
    return null;
  }
  return keepUnchanged(prev, parsed);
}

/** One empty list for every clean check, so readers of `issues` see no change when nothing changed. */
const NO_ISSUES: SceneIssue[] = [];

const isPromise = <T>(v: T | Promise<T>): v is Promise<T> => typeof (v as { then?: unknown }).then === "function";

export function createWorkspaceStore(init: WorkspaceInit, deps: WorkspaceDeps): WorkspaceStore {
  const now = deps.now ?? (() => Date.now());
  const coalesceMs = deps.coalesceMs ?? 1200;
  const historyLimit = deps.historyLimit ?? 300;
  const formParseDelay = deps.formParseDelay ?? { aboveChars: 200_000, ms: 200 };
  let lastEdit: { key: string; at: number } | null = null;

  const startText = init.text ?? init.base.text;
  const known = init.check;
  let firstCheck = () => {};

  const store = createStore<WorkspaceState>()((set, get) => {
    let inFlight = false;
    // The latest successful parse: after a syntax error is fixed, unchanged sections still keep their identity.
    let lastParsed: unknown = null;
    let parseTimer: ReturnType<typeof setTimeout> | undefined;
    const parse = (text: string) => {
      clearTimeout(parseTimer);
      parseTimer = undefined;
      const p = parseForForms(text, lastParsed);
      if (p !== null) lastParsed = p;
      return p;
    };

    /** Take a check's answer if it is still about the current text. */
    const receive = (revision: number, text: string, result: SceneResult) => {
      const s = get();
      if (s.revision !== revision || s.checkedRevision === revision) return; // stale: a newer text is waiting for its own answer
      set({
        checkedRevision: revision,
        issues: result.ok ? NO_ISSUES : result.issues,
        lastGood: result.ok ? { scene: result.scene, text } : s.lastGood,
      });
    };

    /** Check the current text unless a check is running (it checks the newest text when it answers). */
    const requestCheck = () => {
      if (inFlight) return;
      const { text, revision, checkedRevision } = get();
      if (checkedRevision === revision) return;
      let answer: SceneResult | Promise<SceneResult>;
      try {
        answer = deps.validate(text);
      } catch (e) {
        answer = { ok: false, issues: [{ path: "", message: `the scene could not be checked: ${e instanceof Error ? e.message : String(e)}` }] };
      }
      if (!isPromise(answer)) {
        receive(revision, text, answer);
        return;
      }
      inFlight = true;
      answer
        .catch((e: unknown): SceneResult => ({ ok: false, issues: [{ path: "", message: `the scene could not be checked: ${e instanceof Error ? e.message : String(e)}` }] }))
        .then((result) => {
          inFlight = false;
          receive(revision, text, result);
          requestCheck();
        });
    };

    /** Move to new text; `record` pushes the previous text onto the undo history. */
    const apply = (text: string, source: EditSource, record: { label: string; coalesceKey?: string } | null) => {
      const s = get();
      if (text === s.text) return;
      let past = s.past;
      let future = s.future;
      if (record) {
        const t = now();
        const merge = record.coalesceKey !== undefined && lastEdit?.key === record.coalesceKey && t - lastEdit.at <= coalesceMs && past.length > 0;
        if (!merge) past = [...past, { text: s.text, label: record.label }].slice(-historyLimit);
        future = [];
        lastEdit = record.coalesceKey !== undefined ? { key: record.coalesceKey, at: t } : null;
      } else {
        lastEdit = null;
      }
      if (source === "editor" && text.length > formParseDelay.aboveChars) {
        // The forms follow a big scene's typing after a pause; until then they show the previous parse.
        set({ text, revision: s.revision + 1, lastSource: source, past, future });
        clearTimeout(parseTimer);
        parseTimer = setTimeout(() => set({ parsed: parse(get().text) }), formParseDelay.ms);
      } else {
        set({ text, revision: s.revision + 1, lastSource: source, past, future, parsed: parse(text) });
      }
      requestCheck();
    };

    firstCheck = () => {
      if (known) return;
      // If a restored draft does not validate, the base version's scene is still worth showing.
      if (startText !== init.base.text) {
        const seed = (r: SceneResult) => {
          if (r.ok && !get().lastGood) set({ lastGood: { scene: r.scene, text: init.base.text } });
        };
        try {
          const b = deps.validate(init.base.text);
          if (isPromise(b)) b.then(seed, () => {});
          else seed(b);
        } catch {
          /* the draft's own check reports what is wrong */
        }
      }
      requestCheck();
    };

    return {
      sceneId: init.sceneId,
      canEdit: init.canEdit,
      base: init.base,
      text: startText,
      revision: 0,
      lastSource: "load",
      past: [],
      future: [],
      parsed: parse(startText),
      issues: known && !known.ok ? known.issues : NO_ISSUES,
      checkedRevision: known ? 0 : -1,
      lastGood: known?.ok ? { scene: known.scene, text: startText } : null,
      balances: {},
      view: "image",
      scale: 1,
      noiseTarget: null,
      lastNotice: null,

      edit: (text, opts) => apply(text, opts.source, { label: opts.label, coalesceKey: opts.coalesceKey }),

      editPaths: (changes, opts) => {
        const next = setManyAtPaths(get().text, changes);
        apply(next, "form", { label: opts.label, coalesceKey: opts.coalesceKey });
      },

      undo: () => {
        const s = get();
        const prev = s.past[s.past.length - 1];
        if (!prev) return;
        const future = [...s.future, { text: s.text, label: prev.label }];
        const past = s.past.slice(0, -1);
        apply(prev.text, "history", null);
        set({ past, future, lastNotice: `Undid: ${prev.label}` });
      },

      redo: () => {
        const s = get();
        const next = s.future[s.future.length - 1];
        if (!next) return;
        const past = [...s.past, { text: s.text, label: next.label }];
        const future = s.future.slice(0, -1);
        apply(next.text, "history", null);
        set({ past, future, lastNotice: `Redid: ${next.label}` });
      },

      setBalance: (group, balance) => {
        const cur = get().balances[group] ?? NEUTRAL_BALANCE;
        set({ balances: { ...get().balances, [group]: { ...cur, ...balance } } });
      },

      resetBalance: (group) => {
        if (group === undefined) set({ balances: {} });
        else {
          const { [group]: _dropped, ...rest } = get().balances;
          set({ balances: rest });
        }
      },

      writeBackBalance: () => {
        const s = get();
        const good = s.lastGood;
        if (s.checkedRevision !== s.revision) throw new Error("the scene is still being checked; try again in a moment");
        if (!good || s.issues.length > 0) throw new Error("fix the scene's errors before writing the balance back");
        const wb = writeBackBalance(s.text, good.scene, s.balances);
        if (wb.changes.length === 0) return { changed: 0, notes: wb.notes };
        apply(wb.text, "balance", { label: `write back light balance (${wb.changes.length} value${wb.changes.length === 1 ? "" : "s"})` });
        // The new light values now carry the balance; keeping the gains would apply it twice.
        set({ balances: {} });
        return { changed: wb.changes.length, notes: wb.notes };
      },

      setView: (view) => set({ view }),
      setScale: (scale) => set({ scale }),
      setNoiseTarget: (noiseTarget) => set({ noiseTarget }),

      markSaved: (version) => set({ base: { id: version.id, number: version.number, text: get().text } }),

      rebaseOnto: (head) => set({ base: head }),

      takeVersion: (head, label) => {
        set({ base: head });
        apply(head.text, "conflict", { label });
      },
    };
  });
  firstCheck();
  return store;
}

/** Order of keys when a stored scene (the database does not keep key order) is shown in the editor. */
const KEY_ORDER = [
  "format", "name", "notes", "image", "camera", "render", "display", "environment", "materials", "objects", "lights",
  "id", "type", "shape", "material", "center", "u", "v", "normal", "radius", "min", "max", "asset", "translate", "rotate", "scale",
  "position", "target", "up", "fovY", "aperture", "focusDistance", "shutter",
  "radiance", "power", "intensity", "visible", "group", "motion", "velocity",
  "albedo", "reflectance", "roughness", "ior", "absorption",
  "width", "height", "integrator", "spp", "seed", "maxDepth", "clamp", "exposure", "toneMap",
  "zenith", "horizon", "ground", "rotationY",
];
const rank = (k: string) => {
  const i = KEY_ORDER.indexOf(k);
  return i < 0 ? KEY_ORDER.length : i;
};

function ordered(value: unknown, inRecord = false): unknown {
  if (Array.isArray(value)) return value.map((v) => ordered(v));
  if (value === null || typeof value !== "object") return value;
  const entries = Object.entries(value as Record<string, unknown>);
  // Material ids are the author's names: keep them in their own (alphabetical) order, but order inside each.
  if (!inRecord) entries.sort((a, b) => rank(a[0]) - rank(b[0]));
  return Object.fromEntries(entries.map(([k, v]) => [k, ordered(v, k === "materials" && !inRecord)]));
}

/** Text of a stored scene as the editor shows it: 2-space JSON in the scene format's reading order. */
export function sceneToText(scene: unknown): string {
  return prettyJson(ordered(scene), "") + "\n";
}

/**
 * The scene's JSON in a locally bundled Monaco editor, bound to the scene format's JSON Schema for
 * completion and hover help. Validation markers come from the tracer's own validator (it also checks
 * references between collections that a JSON Schema cannot), placed on the member each issue names.
 * Undo/redo keys go to the workspace store so the editor and the forms share one history.
 */
import Editor, { loader, type OnMount } from "@monaco-editor/react";
import * as monaco from "monaco-editor/editor";
import "monaco-editor/features/register.all";
import { jsonDefaults } from "monaco-editor/languages/features/json/register";
import EditorWorker from "monaco-editor/editor/editor.worker?worker";
import JsonWorker from "monaco-editor/language/json/json.worker?worker";
import { useCallback, useEffect, useMemo, useRef, useState } from "react";
import { useStore } from "zustand";
import sceneJsonSchema from "@tracer/scene/scene.schema.json";
import { parseIssuePath, rangeOfPath } from "~/lib/workspace-json";
import type { WorkspaceState, WorkspaceStore } from "~/stores/workspace";

declare global {
  interface Window {
    MonacoEnvironment?: { getWorker: (id: string, label: string) => Worker };
  }
}

const SCHEMA_URI = "inmemory://tracewell/scene-format-1.schema.json";
const MODEL_URI = "inmemory://tracewell/scene.json";
const MARKER_OWNER = "tracewell-scene";

let configured = false;
function configureMonaco(): void {
  if (configured) return;
  configured = true;
  self.MonacoEnvironment = { getWorker: (_id: string, label: string) => (label === "json" ? new JsonWorker() : new EditorWorker()) };
  loader.config({ monaco }); // use this bundle, never a CDN copy
  jsonDefaults.setDiagnosticsOptions({
    validate: true,
    // Our validator reports schema problems with clearer, path-named messages; Monaco keeps syntax errors.
    schemaValidation: "ignore",
    enableSchemaRequest: false,
    allowComments: false,
    trailingCommas: "error",
    schemas: [{ uri: SCHEMA_URI, fileMatch: [MODEL_URI], schema: sceneJsonSchema }],
  });
  jsonDefaults.setModeConfiguration(JSON_MODES);
}

export type EditorHandle = { revealPath: (path: string, line?: number, column?: number) => void; focus: () => void };

/** Smallest single replacement turning `a` into `b` (keeps the cursor and folding when a form edits one value). */
function minimalEdit(a: string, b: string): { start: number; end: number; text: string } {
  let start = 0;
  const max = Math.min(a.length, b.length);
  while (start < max && a.charCodeAt(start) === b.charCodeAt(start)) start++;
  let ea = a.length;
  let eb = b.length;
  while (ea > start && eb > start && a.charCodeAt(ea - 1) === b.charCodeAt(eb - 1)) {
    ea--;
    eb--;
  }
  return { start, end: ea, text: b.slice(start, eb) };
}

/** Monaco's JSON features, less colour swatches: the scene format writes colours as number triples, so asking the JSON worker for "#rrggbb" strings after every keystroke finds nothing. */
const JSON_MODES = {
  completionItems: true,
  hovers: true,
  diagnostics: true,
  foldingRanges: true,
  tokens: true,
  selectionRanges: true,
  documentFormattingEdits: true,
  documentRangeFormattingEdits: true,
  documentSymbols: true,
  colors: false,
} as const;

export default function SceneEditor({
  store,
  onReady,
  height = "100%",
}: {
  store: WorkspaceStore;
  onReady?: (handle: EditorHandle) => void;
  height?: string;
}) {
  configureMonaco();
  const editorRef = useRef<monaco.editor.IStandaloneCodeEditor | null>(null);
  const applyingRef = useRef(false);
  /** The model's text as last seen (every change to the model passes through onChange), so no getValue() is needed to compare. */
  const modelTextRef = useRef<string>(store.getState().text);
  const [ready, setReady] = useState(false);
  const flashRef = useRef<monaco.editor.IEditorDecorationsCollection | null>(null);
  // The only store value that re-renders the editor; text and issues flow into Monaco without React.
  const canEdit = useStore(store, (s) => s.canEdit);

  useEffect(() => {
    if (!ready) return;
    const ed = editorRef.current;
    if (!ed) return;
    let flashTimer: ReturnType<typeof setTimeout> | undefined;

    // Outside changes (forms, undo, write-back, conflict) flow into the model as one minimal edit.
    const syncText = (text: string) => {
      const model = ed.getModel();
      if (!model || text === modelTextRef.current) return; // the editor's own keystroke coming back
      const current = model.getValue();
      modelTextRef.current = current;
      if (current === text) return;
      const e = minimalEdit(current, text);
      const from = model.getPositionAt(e.start);
      const to = model.getPositionAt(e.end);
      applyingRef.current = true;
      try {
        ed.executeEdits("workspace", [{ range: new monaco.Range(from.lineNumber, from.column, to.lineNumber, to.column), text: e.text, forceMoveMarkers: true }]);
      } finally {
        applyingRef.current = false;
      }
      modelTextRef.current = text;
      // Show where a form, undo or write-back changed the text, briefly marked.
      const a = model.getPositionAt(e.start);
      const b = model.getPositionAt(e.start + e.text.length);
      const changed = new monaco.Range(a.lineNumber, 1, b.lineNumber, model.getLineMaxColumn(b.lineNumber));
      ed.revealRangeInCenterIfOutsideViewport(changed);
      flashRef.current?.clear();
      flashRef.current = ed.createDecorationsCollection([{ range: changed, options: { isWholeLine: true, className: "tw-changed-line" } }]);
      const flash = flashRef.current;
      clearTimeout(flashTimer);
      flashTimer = setTimeout(() => flash.clear(), 1500);
    };

    // Validation markers at the member each issue names, placed when a check answers (Monaco moves them with later edits).
    let markedEmpty = false;
    const mark = (issues: WorkspaceState["issues"]) => {
      const model = ed.getModel();
      if (!model) return;
      if (issues.length === 0) {
        if (!markedEmpty) monaco.editor.setModelMarkers(model, MARKER_OWNER, []);
        markedEmpty = true;
        return;
      }
      markedEmpty = false;
      const value = model.getValue();
      const markers: monaco.editor.IMarkerData[] = [];
      for (const issue of issues) {
        if (issue.path === "" && issue.message.startsWith("invalid JSON")) continue; // Monaco marks syntax itself
        const range = rangeOfPath(value, parseIssuePath(issue.path));
        if (range) {
          const a = model.getPositionAt(range.offset);
          const b = model.getPositionAt(range.offset + Math.max(1, range.length));
          markers.push({ severity: monaco.MarkerSeverity.Error, message: `${issue.path || "scene"}: ${issue.message}`, startLineNumber: a.lineNumber, startColumn: a.column, endLineNumber: b.lineNumber, endColumn: b.column, source: "scene check" });
        } else if (issue.line !== undefined) {
          markers.push({ severity: monaco.MarkerSeverity.Error, message: `${issue.path || "scene"}: ${issue.message}`, startLineNumber: issue.line, startColumn: issue.column ?? 1, endLineNumber: issue.line, endColumn: (issue.column ?? 1) + 1, source: "scene check" });
        }
      }
      monaco.editor.setModelMarkers(model, MARKER_OWNER, markers);
    };

    syncText(store.getState().text);
    mark(store.getState().issues);
    const unsubscribe = store.subscribe((s, prev) => {
      if (s.text !== prev.text) syncText(s.text);
      if (s.issues !== prev.issues) mark(s.issues);
    });
    return () => {
      unsubscribe();
      clearTimeout(flashTimer);
    };
  }, [ready, store]);

  const onMount: OnMount = (ed) => {
    editorRef.current = ed;
    const model = ed.getModel();
    if (model && model.getValue() !== store.getState().text) model.setValue(store.getState().text);
    modelTextRef.current = store.getState().text;
    // One history for editor and forms: the store's undo, not Monaco's own.
    ed.addCommand(monaco.KeyMod.CtrlCmd | monaco.KeyCode.KeyZ, () => store.getState().undo());
    ed.addCommand(monaco.KeyMod.CtrlCmd | monaco.KeyMod.Shift | monaco.KeyCode.KeyZ, () => store.getState().redo());
    ed.addCommand(monaco.KeyMod.CtrlCmd | monaco.KeyCode.KeyY, () => store.getState().redo());
    setReady(true); // starts the text and marker subscriptions now that the model exists
    onReady?.({
      focus: () => ed.focus(),
      revealPath: (path, line, column) => {
        const m = ed.getModel();
        if (!m) return;
        const r = rangeOfPath(m.getValue(), parseIssuePath(path));
        const pos = r ? m.getPositionAt(r.offset) : line !== undefined ? { lineNumber: line, column: column ?? 1 } : null;
        if (!pos) return;
        ed.revealPositionInCenter(pos);
        ed.setPosition(pos);
        ed.focus();
      },
    });
  };

  // Stable across renders: the wrapper would otherwise re-register its change listener and re-apply every option.
  const onChange = useCallback(
    (value: string | undefined) => {
      if (value === undefined) return;
      modelTextRef.current = value;
      if (applyingRef.current || value === store.getState().text) return;
      store.getState().edit(value, { source: "editor", label: "edit in the JSON editor", coalesceKey: "editor" });
    },
    [store],
  );
  const options = useMemo<monaco.editor.IStandaloneEditorConstructionOptions>(
    () => ({
      readOnly: !canEdit,
      minimap: { enabled: false },
      fontSize: 12,
      lineNumbersMinChars: 3,
      scrollBeyondLastLine: false,
      automaticLayout: true,
      tabSize: 2,
      wordWrap: "off",
      ariaLabel: "Scene JSON. Press Ctrl+M to let Tab move focus out of the editor.",
      fixedOverflowWidgets: true,
    }),
    [canEdit],
  );

  return (
    <div className="h-full min-h-0 [&_.tw-changed-line]:bg-accent/20" data-testid="scene-editor">
      <Editor height={height} defaultLanguage="json" path={MODEL_URI} defaultValue={store.getState().text} theme="vs-dark" onMount={onMount} onChange={onChange} options={options} />
    </div>
  );
}

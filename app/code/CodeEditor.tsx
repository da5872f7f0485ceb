import { forwardRef, useEffect, useImperativeHandle, useRef } from "react";
import { basicSetup, EditorView } from "codemirror";
import { javascript } from "@codemirror/lang-javascript";
import { setDiagnostics } from "@codemirror/lint";

/**
 * The stepper code editor: CodeMirror 6 with its basic set-up (line numbers, syntax highlighting, undo and redo,
 * search with Ctrl-F, bracket matching) and TypeScript-aware highlighting. The outer element is the test hook
 * `stepper-code`; error marks are CodeMirror lint diagnostics.
 */
export interface CodeEditorHandle {
  getText(): string;
  setText(text: string): void;
  /** Underline and select the place of an error (1-based line and column), or clear the marks (null). */
  mark(at: { line: number; column: number; message: string } | null): void;
}

interface CodeEditorProps {
  readonly initial: string;
  readonly onChange: (text: string) => void;
}

export const CodeEditor = forwardRef<CodeEditorHandle, CodeEditorProps>(function CodeEditor({ initial, onChange }, ref) {
  const host = useRef<HTMLDivElement>(null);
  const view = useRef<EditorView | null>(null);
  const changed = useRef(onChange);
  changed.current = onChange;

  useEffect(() => {
    const v = new EditorView({
      doc: initial,
      parent: host.current!,
      extensions: [
        basicSetup,
        javascript({ typescript: true }),
        EditorView.updateListener.of((u) => { if (u.docChanged) changed.current(u.state.doc.toString()); }),
        EditorView.theme({ "&": { height: "100%", fontSize: "12.5px" }, ".cm-scroller": { fontFamily: "ui-monospace, SFMono-Regular, Menlo, monospace" } }),
      ],
    });
    view.current = v;
    return () => { v.destroy(); view.current = null; };
  }, []);

  useImperativeHandle(ref, () => ({
    getText: () => view.current?.state.doc.toString() ?? "",
    setText: (text: string) => {
      const v = view.current;
      if (!v) return;
      v.dispatch({ changes: { from: 0, to: v.state.doc.length, insert: text } });
      v.dispatch(setDiagnostics(v.state, []));
    },
    mark: (at) => {
      const v = view.current;
      if (!v) return;
      if (!at) { v.dispatch(setDiagnostics(v.state, [])); return; }
      const doc = v.state.doc;
      const line = doc.line(Math.min(Math.max(1, at.line), doc.lines));
      const from = Math.min(line.to, line.from + Math.max(0, at.column - 1));
      const to = Math.min(line.to, Math.max(from + 1, from));
      v.dispatch({ selection: { anchor: from }, scrollIntoView: true });
      v.dispatch(setDiagnostics(v.state, [{ from, to: to > from ? to : line.to, severity: "error", message: at.message }]));
    },
  }), []);

  return <div className="code-editor" data-testid="stepper-code" ref={host} />;
});

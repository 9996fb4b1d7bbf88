/**
 * Marks the spec lines that have problems inside the cell's CodeMirror editor: a line
 * decoration (class `sw-mod-problemLine`) with the problem as the line's tooltip. The list
 * under the editor stays the primary display; this only points at the line.
 */
import { RangeSetBuilder, StateEffect, StateField } from '@codemirror/state';
import type { EditorState } from '@codemirror/state';
import { Decoration, EditorView } from '@codemirror/view';
import type { DecorationSet } from '@codemirror/view';
import type { SpecProblem } from '../worker/protocol';
import { problemLine } from '../ui/summary';

/** Class of a marked line. */
export const PROBLEM_LINE_CLASS = 'sw-mod-problemLine';

const setProblems = StateEffect.define<SpecProblem[]>();

function decorations(state: EditorState, problems: SpecProblem[]): DecorationSet {
  const byLine = new Map<number, string[]>();
  for (const p of problems) {
    if (p.line === undefined || p.line < 1 || p.line > state.doc.lines) continue;
    byLine.set(p.line, [...(byLine.get(p.line) ?? []), problemLine(p)]);
  }
  const builder = new RangeSetBuilder<Decoration>();
  for (const line of [...byLine.keys()].sort((a, b) => a - b)) {
    const from = state.doc.line(line).from;
    builder.add(from, from, Decoration.line({ class: PROBLEM_LINE_CLASS, attributes: { title: (byLine.get(line) ?? []).join('\n') } }));
  }
  return builder.finish();
}

const problemField = StateField.define<DecorationSet>({
  create: () => Decoration.none,
  update(value, tr) {
    let next = value.map(tr.changes);
    for (const e of tr.effects) if (e.is(setProblems)) next = decorations(tr.state, e.value);
    return next;
  },
  provide: field => EditorView.decorations.from(field)
});

/**
 * Shows `problems` in `view` (replacing earlier marks). Installs the decoration field on
 * first use.
 */
export function markProblems(view: EditorView, problems: SpecProblem[]): void {
  if (view.state.field(problemField, false) === undefined) {
    view.dispatch({ effects: StateEffect.appendConfig.of(problemField) });
  }
  view.dispatch({ effects: setProblems.of(problems) });
}

/** The CodeMirror view behind a JupyterLab editor, when it is one. */
export function codeMirrorView(editor: unknown): EditorView | null {
  const view = (editor as { editor?: unknown } | null)?.editor;
  return view instanceof EditorView ? view : null;
}

/**
 * Small DOM helpers. Text always goes in through `textContent`: nothing the user or a
 * notebook file wrote is ever parsed as HTML.
 */

/** Creates an element with a class and optional text. */
export function el<K extends keyof HTMLElementTagNameMap>(
  tag: K,
  className?: string,
  text?: string
): HTMLElementTagNameMap[K] {
  const node = document.createElement(tag);
  if (className) node.className = className;
  if (text !== undefined) node.textContent = text;
  return node;
}

/** Creates a button with a label, tooltip and click handler. */
export function button(label: string, title: string, onClick: () => void, className = ''): HTMLButtonElement {
  const b = el('button', `jp-Button sw-Button ${className}`.trim(), label);
  b.type = 'button';
  b.title = title;
  b.addEventListener('click', onClick);
  return b;
}

/** Shows or hides a node. */
export function show(node: HTMLElement, visible: boolean): void {
  node.hidden = !visible;
}

/** Replaces all children of `node` with `children`. */
export function replaceChildren(node: HTMLElement, children: Node[]): void {
  node.replaceChildren(...children);
}

/** A `<table>` with a header row and text cells; `rowClass` can mark rows (e.g. verdicts). */
export function textTable(
  className: string,
  header: string[],
  rows: string[][],
  rowClass?: (index: number) => string
): HTMLTableElement {
  const table = el('table', className);
  const head = el('thead');
  const hr = el('tr');
  for (const h of header) hr.appendChild(el('th', undefined, h));
  head.appendChild(hr);
  table.appendChild(head);
  const body = el('tbody');
  rows.forEach((r, i) => {
    const tr = el('tr', rowClass?.(i));
    for (const c of r) tr.appendChild(el('td', undefined, c));
    body.appendChild(tr);
  });
  table.appendChild(body);
  return table;
}

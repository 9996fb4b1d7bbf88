/**
 * The body of the "About Stepwell" dialog: the version, what Stepwell is, the proxy-model caveat
 * and where its documentation is. Text only (built with `textContent`); the plugin shows it.
 */
import { el } from './dom';
import { PROXY_NOTE } from './summary';

/** Stepwell's version (package.json `version`; a unit test keeps them equal). */
export const STEPWELL_VERSION = '0.1.0';

/** What Stepwell is, in two sentences. */
export const ABOUT_TEXT =
  'Stepwell steps one small neural-network experiment — model, data, loss, optimizer recipe and seed — one optimizer ' +
  'update at a time inside a notebook cell, measures curvature against the step size\u2019s stability limit, layer balance, ' +
  'activation health and the gradient, and says what is wrong and what to change, with the source of every threshold. ' +
  'The notebook keeps the whole state, so a colleague can replay it bit for bit.';

/** The documentation files and what each holds (served beside the extension under `static/docs/`). */
export const ABOUT_DOCS: readonly { file: string; what: string }[] = [
  { file: 'README.md', what: 'what Stepwell does, how to run and install it, the spec and the command line' },
  { file: 'DEVELOPERS.md', what: 'how it works inside: layers, the worker, the ledger, the findings and their rules' }
];

/**
 * The dialog's body.
 *
 * @param docsUrl - the folder the documentation files are served from (ends with `/`).
 */
export function aboutBody(docsUrl: string): HTMLElement {
  const box = el('div', 'sw-About');
  box.appendChild(el('p', 'sw-AboutVersion', `Version ${STEPWELL_VERSION}`));
  box.appendChild(el('p', undefined, ABOUT_TEXT));
  box.appendChild(el('p', 'sw-AboutCaveat', PROXY_NOTE));
  box.appendChild(el('p', undefined, 'Documentation (the files at the top of the Stepwell source tree):'));
  const list = el('ul', 'sw-AboutDocs');
  for (const d of ABOUT_DOCS) {
    const li = el('li');
    const a = el('a', undefined, d.file);
    a.href = `${docsUrl}${d.file}`;
    a.target = '_blank';
    a.rel = 'noopener noreferrer';
    li.append(a, document.createTextNode(` — ${d.what}`));
    list.appendChild(li);
  }
  box.appendChild(list);
  return box;
}

/**
 * Markup payloads for the hostile-input tests: each one, if a page ever treated it as markup,
 * script or a URL, would set `window.__pwned`, open a dialog, add an element or attribute that
 * the DOM scan finds, or make a request beyond the app's origin (the harness's network monitor).
 * Invented for these tests; the kinds are the usual ones of cross-site scripting checklists
 * (common practice (no single source)).
 */

/** A payload with a short name for messages. */
export interface MarkupPayload {
  name: string;
  text: string;
}

/** The payloads, each also free of newlines so it fits a YAML string, a key, a CSV header and a branch name. */
export const MARKUP_PAYLOADS: readonly MarkupPayload[] = [
  { name: 'img onerror', text: '<img src=x onerror="window.__pwned=1;alert(1)">' },
  { name: 'script element', text: '<script>window.__pwned=2</script>' },
  { name: 'javascript: URL', text: '[open](javascript:window.__pwned=3) <a href="javascript:window.__pwned=3">a</a>' },
  { name: 'svg onload', text: '<svg onload="window.__pwned=4"></svg>' },
  { name: 'attribute break-out', text: '"><iframe src="javascript:parent.__pwned=5"></iframe>' },
  { name: 'template literal', text: '${window.__pwned=6}{{constructor.constructor("window.__pwned=6")()}}' },
  { name: 'plotly hover template', text: '%{customdata[0]}<b onmouseover="window.__pwned=7">hover</b>%{x}' },
  { name: 'foreign resource', text: '<img src="http://stepwell-payload.invalid/x.png"><link rel=stylesheet href="https://stepwell-payload.invalid/s.css">' },
  { name: 'bidi override', text: 'safe\u202Egnp.exe\u202C\u2066isolated\u2069 name' },
  { name: 'long string', text: `long-${'A'.repeat(5000)}-end` }
];

/**
 * A small SVG renderer over the plain figure descriptions of `trace.ts` and `compare.ts` (the
 * ones the cell draws with plotly), for places without plotly or a browser: the saved output's
 * fallback for viewers without Stepwell and the command line's reports. Draws what a
 * description states — line series with gaps at nulls, dashes and markers, linear or log axes
 * with grid and ticks, the legend, notes and a title — as one standalone `<svg>` element with a
 * `<title>` and `<desc>` (the figure's text alternative). Every piece of text is escaped, so
 * names from an untrusted notebook cannot inject markup. Pure: string in, string out.
 */
import { dataRange, makeScale, tickLabel, tickStep, type Scale } from './axis';
import { decimate, type Figure, type LineSeries } from './trace';

/** Options of {@link renderSvg}. */
export interface SvgOptions {
  /** Pixel width; default the layout's `width`, else 640. */
  width?: number;
  /** Prefix for element ids (a clip path), unique per page when several figures share one. Default `fig`. */
  id?: string;
  /** Short name of the figure (`<title>`). Default: the layout's title, else "Figure". */
  title?: string;
  /** The text alternative (`<desc>`), e.g. `traceText(...)`. */
  description?: string;
}

/** Escapes text for SVG/XML content and attribute values. */
export function escapeXml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] as string);
}

/** A pixel coordinate with one decimal (keeps the file small; 0.1 px is below what a screen shows). */
function px(v: number): string {
  return String(Math.round(v * 10) / 10);
}

/** A colour from a description, or a neutral grey when it is not a plain colour (no url(), no markup). */
function colour(c: string | undefined): string {
  return c !== undefined && /^(#[0-9a-fA-F]{3,8}|[a-zA-Z]{3,20}|rgba?\([0-9., ]{5,40}\))$/.test(c) ? c : '#777777';
}

/** A font-family value without characters that could leave the attribute. */
function fontFamily(f: string): string {
  return f.replace(/[^a-zA-Z0-9 ,\-']/g, '').slice(0, 120) || 'sans-serif';
}

const DASH: Record<string, string> = { dash: '6 4', dot: '2 3' };

/** Rough width of a text in pixels (Helvetica-like average glyph width), for layout only. */
function textWidth(text: string, size: number): number {
  return text.length * size * 0.58;
}

/** Legend entries laid out in rows across `width` pixels; returns the rows' height. */
function legendRows(series: readonly LineSeries[], width: number, size: number): { items: { s: LineSeries; x: number; row: number }[]; height: number } {
  const items: { s: LineSeries; x: number; row: number }[] = [];
  let x = 0;
  let row = 0;
  for (const s of series) {
    const w = 28 + textWidth(s.name, size) + 18;
    if (x > 0 && x + w > width) {
      row++;
      x = 0;
    }
    items.push({ s, x, row });
    x += w;
  }
  return { items, height: items.length === 0 ? 0 : (row + 1) * (size + 8) };
}

/** The path of one series: `M`/`L` commands, a new `M` after every gap (null or unshowable value). */
function linePath(s: LineSeries, xs: Scale, ys: Scale): string {
  let d = '';
  let pen = false;
  for (let i = 0; i < s.x.length; i++) {
    const yv = s.y[i];
    const x = xs.at(s.x[i]);
    const y = yv === null ? null : ys.at(yv);
    if (x === null || y === null) {
      pen = false;
      continue;
    }
    d += `${pen ? 'L' : 'M'}${px(x)} ${px(y)}`;
    pen = true;
  }
  return d;
}

/** One marker: a circle, or a diamond when the description asks for one. */
function marker(x: number, y: number, s: LineSeries): string {
  const m = s.marker;
  const size = m?.size ?? 6;
  const fill = colour(m?.color ?? s.line.color);
  if (m?.symbol === 'diamond') {
    const r = size / 1.6;
    return `<path d="M${px(x)} ${px(y - r)}L${px(x + r)} ${px(y)}L${px(x)} ${px(y + r)}L${px(x - r)} ${px(y)}Z" fill="${fill}"/>`;
  }
  return `<circle cx="${px(x)}" cy="${px(y)}" r="${px(size / 2)}" fill="${fill}"/>`;
}

/**
 * Renders a figure description as a standalone SVG document fragment (`<svg xmlns=…>…</svg>`).
 * The x range covers every series' finite x; the y range their finite y (positive ones on a log
 * axis), padded by 5 %. A figure with no finite value draws its frame and says so.
 */
export function renderSvg(fig: Figure, options: SvgOptions = {}): string {
  const L = fig.layout;
  const width = options.width ?? L.width ?? 640;
  const height = L.height;
  const size = L.font.size;
  const id = (options.id ?? 'fig').replace(/[^a-zA-Z0-9_-]/g, '') || 'fig';
  const fg = colour(L.font.color);
  const title = L.title?.text;
  const shown = L.showlegend ? fig.data.filter((s) => s.showlegend !== false) : [];
  const left = L.margin.l + 8;
  const right = width - L.margin.r;
  const legend = legendRows(shown, right - left, size);
  const top = L.margin.t + (title ? 22 : 0) + legend.height;
  const bottom = height - L.margin.b - 8;
  const plotH = Math.max(20, bottom - top);
  const xs = dataRange(fig.data.flatMap((s) => s.x), L.xaxis, false);
  const ys = dataRange(fig.data.flatMap((s) => s.y.filter((v): v is number => v !== null)), L.yaxis, true);
  const out: string[] = [];
  const name = options.title ?? title ?? 'Figure';
  out.push(
    `<svg xmlns="http://www.w3.org/2000/svg" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" role="img" aria-labelledby="${id}-title ${id}-desc" font-family="${escapeXml(fontFamily(L.font.family))}" font-size="${size}">`,
    `<title id="${id}-title">${escapeXml(name)}</title>`,
    `<desc id="${id}-desc">${escapeXml(options.description ?? '')}</desc>`,
    `<rect width="${width}" height="${height}" fill="${colour(L.paper_bgcolor)}"/>`,
    `<rect x="${left}" y="${px(top)}" width="${px(right - left)}" height="${px(plotH)}" fill="${colour(L.plot_bgcolor)}"/>`
  );
  if (title) out.push(`<text x="${px(width / 2)}" y="${L.margin.t + 4}" text-anchor="middle" font-size="${L.title?.font.size ?? size + 2}" fill="${fg}">${escapeXml(title)}</text>`);
  legend.items.forEach(({ s, x, row }) => {
    const y = L.margin.t + (title ? 22 : 0) + row * (size + 8) + size / 2 + 2;
    const c = colour(s.line.color);
    const dash = s.line.dash && DASH[s.line.dash] ? ` stroke-dasharray="${DASH[s.line.dash]}"` : '';
    const lx = left + x;
    const sample = s.mode === 'markers' ? marker(lx + 12, y, s) : `<line x1="${px(lx)}" y1="${px(y)}" x2="${px(lx + 24)}" y2="${px(y)}" stroke="${c}" stroke-width="${s.line.width || 2}"${dash}/>`;
    out.push(`<g class="legend-item">${sample}<text x="${px(lx + 28)}" y="${px(y + size * 0.35)}" fill="${fg}">${escapeXml(s.name)}</text></g>`);
  });
  const xTitle = `<text x="${px((left + right) / 2)}" y="${height - 6}" text-anchor="middle" fill="${colour(L.xaxis.color)}">${escapeXml(L.xaxis.title.text)}</text>`;
  const yTitle = `<text transform="translate(14 ${px(top + plotH / 2)}) rotate(-90)" text-anchor="middle" fill="${colour(L.yaxis.color)}">${escapeXml(L.yaxis.title.text)}</text>`;
  out.push(xTitle, yTitle);
  if (xs === null || ys === null) {
    out.push(`<text x="${px((left + right) / 2)}" y="${px(top + plotH / 2)}" text-anchor="middle" fill="${fg}">no finite values to draw</text>`, '</svg>');
    return out.join('');
  }
  const sx = makeScale(L.xaxis, xs, left, right, Math.max(3, Math.floor((right - left) / 80)));
  const sy = makeScale(L.yaxis, ys, top + plotH, top, Math.max(3, Math.floor(plotH / 45)));
  const grid: string[] = [];
  const labels: string[] = [];
  const xStep = tickStep(sx);
  for (const t of sx.ticks) {
    const x = sx.at(t) as number;
    grid.push(`<line x1="${px(x)}" y1="${px(top)}" x2="${px(x)}" y2="${px(top + plotH)}" stroke="${colour(L.xaxis.gridcolor)}"/>`);
    labels.push(`<text class="tick-x" x="${px(x)}" y="${px(top + plotH + size + 4)}" text-anchor="middle" fill="${colour(L.xaxis.color)}">${escapeXml(tickLabel(t, sx.type === 'log' ? t : xStep))}</text>`);
  }
  const yStep = tickStep(sy);
  for (const t of sy.ticks) {
    const y = sy.at(t) as number;
    const zero = sy.type === 'linear' && t === 0;
    grid.push(`<line x1="${left}" y1="${px(y)}" x2="${px(right)}" y2="${px(y)}" stroke="${colour(zero ? L.yaxis.zerolinecolor : L.yaxis.gridcolor)}"/>`);
    labels.push(`<text class="tick-y" x="${left - 6}" y="${px(y + size * 0.35)}" text-anchor="end" fill="${colour(L.yaxis.color)}">${escapeXml(tickLabel(t, sy.type === 'log' ? t : yStep))}</text>`);
  }
  out.push(`<g class="grid" stroke-width="1">${grid.join('')}</g>`, `<g class="ticks">${labels.join('')}</g>`);
  out.push(`<clipPath id="${id}-plot"><rect x="${left}" y="${px(top)}" width="${px(right - left)}" height="${px(plotH)}"/></clipPath>`);
  const series: string[] = [];
  fig.data.forEach((s, k) => {
    const c = colour(s.line.color);
    const parts: string[] = [];
    if (s.mode !== 'markers') {
      const d = linePath(s, sx, sy);
      const dash = s.line.dash && DASH[s.line.dash] ? ` stroke-dasharray="${DASH[s.line.dash]}"` : '';
      if (d !== '') parts.push(`<path d="${d}" fill="none" stroke="${c}" stroke-width="${s.line.width || 2}" stroke-linejoin="round"${dash}/>`);
    }
    if (s.mode !== 'lines') {
      for (let i = 0; i < s.x.length; i++) {
        const yv = s.y[i];
        const x = sx.at(s.x[i]);
        const y = yv === null ? null : sy.at(yv);
        if (x !== null && y !== null) parts.push(marker(x, y, s));
      }
    }
    series.push(`<g class="series" data-series="${k}" data-name="${escapeXml(s.name)}">${parts.join('')}</g>`);
  });
  out.push(`<g clip-path="url(#${id}-plot)">${series.join('')}</g>`);
  for (const n of L.annotations) {
    const x = sx.at(n.x);
    if (x === null) continue;
    const y = top + (1 - n.y) * plotH + n.font.size + 2;
    const anchor = x > right - textWidth(n.text, n.font.size) ? 'end' : 'start';
    out.push(`<text class="note" x="${px(anchor === 'end' ? x - 4 : x + 4)}" y="${px(y)}" text-anchor="${anchor}" font-size="${n.font.size}" fill="${colour(n.font.color)}">${escapeXml(n.text)}</text>`);
  }
  out.push(`<rect x="${left}" y="${px(top)}" width="${px(right - left)}" height="${px(plotH)}" fill="none" stroke="${colour(L.xaxis.gridcolor)}"/>`, '</svg>');
  return out.join('');
}

/** The SVG as a `data:` URL (base64 of its UTF-8 bytes), for a markdown image or an `<img>`. */
export function svgDataUrl(svg: string): string {
  const bytes = new TextEncoder().encode(svg);
  let bin = '';
  for (let i = 0; i < bytes.length; i += 0x8000) bin += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return `data:image/svg+xml;base64,${btoa(bin)}`;
}

/** Most points per series in a small standalone image (a saved output's fallback). */
export const IMAGE_POINTS = 300;

/**
 * A figure with every series reduced to at most `maxPoints` points by {@link decimate} (which
 * keeps each bucket's extremes, so spikes and divergences stay visible): for small images
 * embedded in a notebook, where every byte is saved with it.
 */
export function thinned(fig: Figure, maxPoints = IMAGE_POINTS): Figure {
  return { ...fig, data: fig.data.map((s) => ({ ...s, ...decimate(s.x, s.y, maxPoints) })) };
}

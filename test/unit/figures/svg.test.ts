/**
 * The SVG renderer over the plain figure descriptions: axis scales and ticks, the path of every
 * series (gaps at nulls, points at the pixels the axis maps them to), markers, legend, notes, and
 * escaping of every text. Pixel positions are checked against the linear map written out here
 * by hand (common practice: p = p0 + (v − lo)/(hi − lo)·(p1 − p0)); that the drawn points sit
 * under the labelled ticks in a real renderer is read back from Chromium in test/e2e/report.test.ts.
 */
import { dataRange, makeScale, niceStep, powerOfTen, tickLabel } from '../../../src/figures/axis';
import { renderSvg, svgDataUrl, thinned } from '../../../src/figures/svg';
import { IMAGE_THEME, traceFigure, themedAxis, themedLayout, type Figure } from '../../../src/figures/trace';
import { lossImage, markdownSummary } from '../../../src/ui/summary';
import type { StepRecord } from '../../../src/core/state';

const rec = (step: number, loss: number, heldOutLoss?: number): StepRecord => ({
  step, loss, batchLoss: loss, gradNorm: 1, updateNorm: 0.1, lr: 0.1, evaluations: 1, layers: [], ms: 0, ...(heldOutLoss !== undefined ? { heldOutLoss } : {})
});

describe('axis scales and ticks', () => {
  it.each([[0.7, 1], [1.2, 2], [3, 5], [0.013, 0.02], [70, 100], [0.5, 0.5]])('niceStep(%p) = %p', (raw, step) => {
    expect(niceStep(raw)).toBeCloseTo(step, 12);
  });
  it('labels: plain digits in 10⁻³…10⁵, powers of ten outside, as many decimals as the spacing needs', () => {
    expect(powerOfTen(-6)).toBe('10⁻⁶');
    expect([tickLabel(0.25, 0.05), tickLabel(0.2, 0.2), tickLabel(1000, 200), tickLabel(-0.5, 0.5), tickLabel(0, 1)]).toEqual(['0.25', '0.2', '1000', '−0.5', '0']);
    expect([tickLabel(1e-5, 1e-5), tickLabel(2e-5, 2e-5), tickLabel(1e6, 1e6), tickLabel(2.5e7, 5e6)]).toEqual(['10⁻⁵', '2×10⁻⁵', '10⁶', '2.5×10⁷']);
  });
  it('a linear range pads 5 % (from 0 with rangemode tozero); a log range pads 5 % of its decades and skips values ≤ 0', () => {
    const lin = themedAxis(IMAGE_THEME, 'loss');
    expect(dataRange([1, 3], lin, true)).toEqual({ lo: 0.9, hi: 3.1 });
    expect(dataRange([1, 3], { ...lin, rangemode: 'tozero' }, false)).toEqual({ lo: 0, hi: 3 });
    const log = themedAxis(IMAGE_THEME, 'loss', 'log');
    const r = dataRange([0, -1, 0.01, 100], log, true);
    expect(Math.log10(r!.lo)).toBeCloseTo(-2.2, 12);
    expect(Math.log10(r!.hi)).toBeCloseTo(2.2, 12);
    expect(dataRange([NaN, Infinity], lin, true)).toBeNull();
  });
  it('log ticks at every power of ten over a wide range, 1-2-5 within two decades; linear ticks are multiples of the step', () => {
    const log = themedAxis(IMAGE_THEME, 'loss', 'log');
    expect(makeScale(log, { lo: 0.005, hi: 2000 }, 0, 100).ticks).toEqual([0.01, 0.1, 1, 10, 100, 1000]);
    expect(makeScale(log, { lo: 0.15, hi: 3 }, 0, 100).ticks.map((t) => Number(t.toPrecision(3)))).toEqual([0.2, 0.5, 1, 2]);
    const s = makeScale(themedAxis(IMAGE_THEME, 'x'), { lo: -0.03, hi: 1.07 }, 0, 110, 6);
    expect(s.ticks).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
    // The map is linear: 0 at 3 px, 1 at 103 px (source: the formula in the module comment).
    expect(s.at(0)).toBeCloseTo(3, 12);
    expect(s.at(1)).toBeCloseTo(103, 12);
  });
});

/** A two-series figure with a gap, over known ranges. */
function figure(): Figure {
  return {
    data: [
      { type: 'scatter', mode: 'lines', name: 'a <b>&</b>', x: [0, 1, 2, 3, 4], y: [1, 2, null, 4, 5], line: { color: '#1565c0', width: 2 }, hovertemplate: '' },
      { type: 'scatter', mode: 'markers', name: 'b', x: [2], y: [3], line: { color: 'javascript:alert(1)', width: 0 }, marker: { color: '#ef6c00', size: 10, symbol: 'diamond' }, hovertemplate: '' }
    ],
    layout: themedLayout(IMAGE_THEME, {
      height: 300,
      xaxis: { ...themedAxis(IMAGE_THEME, 'step'), rangemode: 'tozero' },
      yaxis: themedAxis(IMAGE_THEME, 'loss'),
      annotations: [{ x: 3, y: 1, xref: 'x', yref: 'paper', text: 'not finite <here>', showarrow: false, font: { color: '#c62828', size: 11 }, yanchor: 'top' }],
      showlegend: true
    })
  };
}

describe('renderSvg', () => {
  const svg = renderSvg(figure(), { width: 500, id: 'f1', title: 'T & t', description: 'a "b" <c>' });

  it('is one svg element with a title, a description, a clip path of its own id, one group per series', () => {
    expect(svg.startsWith('<svg xmlns="http://www.w3.org/2000/svg" width="500" height="300" viewBox="0 0 500 300" role="img" aria-labelledby="f1-title f1-desc"')).toBe(true);
    expect(svg.endsWith('</svg>')).toBe(true);
    expect(svg).toContain('<title id="f1-title">T &amp; t</title>');
    expect(svg).toContain('<desc id="f1-desc">a &quot;b&quot; &lt;c&gt;</desc>');
    expect(svg).toContain('<clipPath id="f1-plot">');
    expect(svg.match(/<g class="series"/g)).toHaveLength(2);
  });

  it('escapes names and notes, and replaces a colour that is not a plain colour', () => {
    expect(svg).toContain('a &lt;b&gt;&amp;&lt;/b&gt;');
    expect(svg).toContain('not finite &lt;here&gt;');
    expect(svg).not.toMatch(/<b>|<here>|javascript:/);
  });

  it('draws each series at the pixels of the linear map, with a new subpath after the gap', () => {
    const d = /<g class="series" data-series="0"[^>]*><path d="([^"]+)"/.exec(svg)?.[1] ?? '';
    const pts = [...d.matchAll(/([ML])([-\d.]+) ([-\d.]+)/g)].map((m) => [m[1], Number(m[2]), Number(m[3])] as const);
    expect(pts.map((p) => p[0])).toEqual(['M', 'L', 'M', 'L']);
    // Plot box: x from margin.l + 8 = 64 to 500 − margin.r = 484; y range 1…5 padded to 0.8…5.2.
    const left = 64;
    const right = 484;
    const xs = pts.map((p) => p[1]);
    expect(xs).toEqual([0, 1, 3, 4].map((x) => Math.round((left + (x / 4) * (right - left)) * 10) / 10));
    const top = Number(/<clipPath id="f1-plot"><rect x="64" y="([\d.]+)" width="420" height="([\d.]+)"/.exec(svg)?.[1]);
    const h = Number(/<clipPath id="f1-plot"><rect x="64" y="[\d.]+" width="420" height="([\d.]+)"/.exec(svg)?.[1]);
    const ys = pts.map((p) => p[2]);
    const want = [1, 2, 4, 5].map((v) => Math.round((top + h - ((v - 0.8) / 4.4) * h) * 10) / 10);
    ys.forEach((y, i) => expect(Math.abs(y - want[i])).toBeLessThanOrEqual(0.11));
  });

  it('draws a diamond marker, a legend entry per shown series and the note at its x', () => {
    expect(svg).toMatch(/<g class="series" data-series="1" data-name="b"><path d="M[\d.]+ [\d.]+L[\d.]+ [\d.]+L[\d.]+ [\d.]+L[\d.]+ [\d.]+Z" fill="#ef6c00"\/><\/g>/);
    expect(svg.match(/<g class="legend-item">/g)).toHaveLength(2);
    expect(svg).toMatch(/<text class="note" x="[\d.]+" y="[\d.]+" text-anchor="(start|end)" font-size="11" fill="#c62828">/);
  });

  it('says so when nothing is finite', () => {
    const f = figure();
    f.data = f.data.map((s) => ({ ...s, y: s.y.map(() => null) }));
    expect(renderSvg(f)).toContain('no finite values to draw');
  });
});

describe('the saved output’s loss image', () => {
  const trajectory = Array.from({ length: 4001 }, (_, i) => rec(i, 1 / (1 + i), 1.5 / (1 + i)));
  it('thins every series to at most 300 points and keeps both ends', () => {
    const fig = thinned(traceFigure(trajectory, IMAGE_THEME));
    for (const s of fig.data) {
      expect(s.x.length).toBeLessThanOrEqual(302);
      expect([s.x[0], s.x[s.x.length - 1]]).toEqual([0, 4000]);
    }
  });
  it('is embedded in the markdown fallback as a data URL whose bytes are the SVG, with the text alternative as alt', () => {
    const img = lossImage(trajectory);
    expect(img).not.toBeNull();
    const md = markdownSummary({ version: 2, branch: 'main', branches: [], step: 4000, loss: 1 / 4001, heldOutLoss: 1.5 / 4001, recipe: 'sgd', setup: 'net', fingerprint: 'ab', parameterCount: 3 }, img);
    const m = /!\[([^\]]*)\]\(data:image\/svg\+xml;base64,([A-Za-z0-9+/=]+)\)/.exec(md);
    expect(m).not.toBeNull();
    expect(Buffer.from(m![2], 'base64').toString('utf8')).toBe(img!.svg);
    expect(m![1]).toContain('Training loss per step: 1 at step 0');
    expect(svgDataUrl(img!.svg).length).toBeLessThan(20_000);
    expect(markdownSummary({ version: 2, branch: 'main', branches: [], step: 0, loss: 1, heldOutLoss: null, recipe: 'sgd', setup: 'net', fingerprint: 'ab', parameterCount: 3 })).not.toContain('data:image');
  });
});

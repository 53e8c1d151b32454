// Checks the output-characteristic chart: nice axis ticks, marker positions on the right side for each polarity, escaping and finite output.
import { describe, expect, it } from 'vitest';
import type { OutputCharacteristicResult } from '../../../shared-analysis/src/features/sweep';
import {
  axisTicks,
  escapeXml,
  layoutOutputCharacteristic,
  niceNumber,
  niceTicks,
  renderCornerTableHtml,
  renderOutputCharacteristicSvg,
} from '../../../shared-analysis/src/view/plot';
import { panelContentSecurityPolicy, renderPanelHtml } from '../../../client/src/panel';
import type { Technology } from '../../../shared-analysis/src/structures/types';

const SIZE = { width: 720, height: 420 };

/** A sweep from 0 to 5 V: current rising to 1 mA by 0.2 V, then a slight slope (output resistance). */
function sweep(overrides: Partial<OutputCharacteristicResult> = {}): OutputCharacteristicResult {
  const points = Array.from({ length: 51 }, (_, k) => {
    const v = k * 0.1;
    const i = v < 0.2 ? (v / 0.2) * 1e-3 : 1e-3 * (1 + (v - 0.2) / 250);
    return { v, i };
  });
  return {
    device: 'Q2',
    structureId: 'mirror-1',
    title: 'Mirror output Q2 of the simple current mirror on Q1 (NPN)',
    technology: 'npn',
    node: 'out',
    points,
    edgeV: 0.2,
    activeSide: 'above',
    operatingV: 3,
    operatingI: 1.0112e-3,
    range: { low: 0, high: 5, rails: ['0', 'vcc'] },
    cornerSpread: [
      { label: 'supply −5 %', i: 0.98e-3 },
      { label: 'hot 125 °C', i: 1.03e-3 },
      { label: 'beta low', i: 0.96e-3 },
    ],
    ...overrides,
  };
}

/** Reads a numeric attribute of the first element with the given class. */
function attr(svg: string, cls: string, name: string): number {
  const el = new RegExp(`<[a-z]+ class="${cls}[" ][^>]*>`).exec(svg);
  if (!el) throw new Error(`no element with class ${cls}`);
  const m = new RegExp(`\\b${name}="([^"]*)"`).exec(el[0]);
  if (!m) throw new Error(`no ${name} on ${cls}`);
  return Number(m[1]);
}

/** Checks one nice-ticks case: the widened range, the step and the tick values. */
function checkTicks(input: [number, number, number], expected: { min: number; max: number; step: number; values: number[] }): void {
  const t = niceTicks(...input);
  expect(t.min).toBeCloseTo(expected.min, 12);
  expect(t.max).toBeCloseTo(expected.max, 12);
  expect(t.step).toBeCloseTo(expected.step, 12);
  expect(t.values.length).toBe(expected.values.length);
  t.values.forEach((v, k) => expect(v).toBeCloseTo(expected.values[k]!, 12));
}

describe('nice numbers and ticks', () => {
  // Source: P. S. Heckbert, "Nice Numbers for Graph Labels", Graphics Gems (1990): nicenum picks
  // 1, 2, 5 or 10 times a power of ten; rounded thresholds 1.5, 3, 7; ceiling thresholds 1, 2, 5.
  it('picks 1, 2, 5 × 10^k by Heckbert\'s thresholds', () => {
    expect(niceNumber(1.02, false)).toBeCloseTo(2, 12);
    expect(niceNumber(3, false)).toBeCloseTo(5, 12);
    expect(niceNumber(0.23, true)).toBeCloseTo(0.2, 12);
    expect(niceNumber(0.5, true)).toBeCloseTo(0.5, 12);
    expect(niceNumber(7.1, true)).toBeCloseTo(10, 12);
    expect(niceNumber(140, true)).toBeCloseTo(100, 12);
  });

  // Worked by hand with Heckbert's loose labelling: range = nicenum(max − min, false),
  // step = nicenum(range / (n − 1), true), bounds floored/ceiled to the step.
  it('labels 0…5 V in 1 V steps and 0…1.02 mA in 0.5 mA steps', () => {
    checkTicks([0, 5, 6], { min: 0, max: 5, step: 1, values: [0, 1, 2, 3, 4, 5] });
    checkTicks([0, 1.02e-3, 5], { min: 0, max: 1.5e-3, step: 5e-4, values: [0, 5e-4, 1e-3, 1.5e-3] });
    checkTicks([-0.3, 0.7, 6], { min: -0.4, max: 0.8, step: 0.2, values: [-0.4, -0.2, 0, 0.2, 0.4, 0.6, 0.8] });
  });

  it('steps one nice number finer when the loose range wastes more than a sixth of the axis', () => {
    const t = axisTicks(0, 12, 4);
    expect(t.step).toBe(2);
    expect(t.values).toEqual([0, 2, 4, 6, 8, 10, 12]);
    expect(axisTicks(0, 5, 6).values).toEqual([0, 1, 2, 3, 4, 5]);
  });

  it('writes tick values without floating-point residue', () => {
    for (const v of niceTicks(0, 0.7, 8).values) expect(String(v).length).toBeLessThanOrEqual(4);
  });
});

describe('chart layout', () => {
  it('titles the axes with the SI prefix that fits (mA for a 1 mA output) and labels the ticks in it', () => {
    const layout = layoutOutputCharacteristic(sweep(), SIZE)!;
    expect(layout.x.title).toBe('Voltage at node out (V)');
    expect(layout.x.ticks.map((t) => t.label)).toEqual(['0', '1', '2', '3', '4', '5']);
    // Source: SI prefixes milli = 10^−3, micro = 10^−6 (BIPM, The International System of Units, 9th ed., 2019).
    expect(layout.y.exponent).toBe(-3);
    expect(layout.y.title).toBe('Output current (mA)');
    // Heckbert's loose labels would run to 1.5 mA; one step finer (0.2 mA) wastes less of the axis.
    expect(layout.y.ticks.map((t) => t.label)).toEqual(['0', '0.2', '0.4', '0.6', '0.8', '1.0', '1.2']);
  });

  it('uses µA for a 250 µA output', () => {
    const s = sweep();
    const layout = layoutOutputCharacteristic({ ...s, points: s.points.map((p) => ({ v: p.v, i: p.i / 4 })), operatingI: s.operatingI! / 4, cornerSpread: [] }, SIZE)!;
    expect(layout.y.title).toBe('Output current (µA)');
    expect(layout.y.ticks.at(-1)!.label).toMatch(/^\d+$/);
  });

  it('places the ticks on the plot edges: first tick at the left/bottom, last at the right/top', () => {
    const layout = layoutOutputCharacteristic(sweep(), SIZE)!;
    expect(layout.x.ticks[0]!.px).toBeCloseTo(layout.plot.left, 6);
    expect(layout.x.ticks.at(-1)!.px).toBeCloseTo(layout.plot.right, 6);
    expect(layout.y.ticks[0]!.px).toBeCloseTo(layout.plot.bottom, 6);
    expect(layout.y.ticks.at(-1)!.px).toBeCloseTo(layout.plot.top, 6);
  });
});

describe('markers in the SVG', () => {
  it('draws the compliance edge at its voltage on the x axis', () => {
    const result = sweep({ edgeV: 0.2 });
    const layout = layoutOutputCharacteristic(result, SIZE)!;
    const svg = renderOutputCharacteristicSvg(result, SIZE);
    const expected = layout.plot.left + ((0.2 - layout.x.min) / (layout.x.max - layout.x.min)) * (layout.plot.right - layout.plot.left);
    expect(attr(svg, 'qp-edge', 'x1')).toBeCloseTo(expected, 1);
    expect(attr(svg, 'qp-edge', 'x2')).toBeCloseTo(expected, 1);
    expect(attr(svg, 'qp-edge', 'data-volts')).toBe(0.2);
    // The shaded band ends at the edge.
    expect(attr(svg, 'qp-region-outside', 'x') + attr(svg, 'qp-region-outside', 'width')).toBeCloseTo(expected, 1);
    expect(svg).toContain('edge of active region 0.2 V');
  });

  it('puts the operating point where the operating-point solve says, not where the sweep interpolates', () => {
    // The solve says 362 µA at 3.05 V; the sweep around it reads about 1.01 mA. The marker must follow the solve.
    const result = sweep({ operatingV: 3.05, operatingI: 362e-6 });
    const svg = renderOutputCharacteristicSvg(result, SIZE);
    const layout = layoutOutputCharacteristic(result, SIZE)!;
    expect(attr(svg, 'qp-operating', 'data-amps')).toBe(362e-6);
    const py = layout.plot.bottom - ((362e-6 - layout.y.min) / (layout.y.max - layout.y.min)) * (layout.plot.bottom - layout.plot.top);
    expect(attr(svg, 'qp-operating', 'cy')).toBeCloseTo(py, 1);
    expect(svg).toMatch(/operating point 3\.05 V, 362 µA/);
  });

  it('draws the out-of-region band left of the edge for a sink (NPN, NMOS) and right of it for a source (PNP, PMOS)', () => {
    // Source: Sedra & Smith, "Microelectronic Circuits" — an NPN (NMOS) output leaves forward-active (saturation)
    // as its collector (drain) falls toward its emitter (source): below the edge. A PNP (PMOS) output, hung from
    // the upper rail, leaves it as its collector (drain) rises toward the upper rail: above the edge.
    const sink = layoutOutputCharacteristic(sweep({ edgeV: 0.7, activeSide: 'above' }), SIZE)!;
    expect(sink.outside!.x0).toBeCloseTo(sink.plot.left, 6);
    expect(sink.outside!.x1).toBeCloseTo(sink.edge!.px, 6);
    const source = layoutOutputCharacteristic(sweep({ edgeV: 4.3, activeSide: 'below', technology: 'pmos' }), SIZE)!;
    expect(source.outside!.x0).toBeCloseTo(source.edge!.px, 6);
    expect(source.outside!.x1).toBeCloseTo(source.plot.right, 6);
    const svg = renderOutputCharacteristicSvg(sweep({ edgeV: 4.3, activeSide: 'below' }), SIZE);
    expect(svg).toMatch(/class="qp-region-outside qp-right"/);
    expect(svg).toMatch(/a current source below 4\.3 V/);
  });

  it('marks a reversed current and keeps the forward current setting the scale', () => {
    // Forward 1 mA, and a reversed spike of −20 mA at the first point: the axis reaches down a sixth of 1 mA at most.
    const s = sweep();
    const points = s.points.map((p, k) => (k === 0 ? { v: p.v, i: -20e-3 } : k === 1 ? { v: p.v, i: -1e-3 } : p));
    const layout = layoutOutputCharacteristic({ ...s, points }, SIZE)!;
    expect(layout.y.min).toBeGreaterThanOrEqual(-1.03e-3 / 6 - 0.1e-3);
    expect(layout.y.min).toBeLessThan(0);
    expect(layout.y.max).toBeLessThanOrEqual(1.2e-3);
    expect(layout.clippedBelow).toBe(-20e-3);
    expect(layout.reversed.length).toBe(1);
    expect(layout.reversed[0]!.v0).toBe(0);
    expect(layout.reversed[0]!.v1).toBeCloseTo(0.15, 9);
    const svg = renderOutputCharacteristicSvg({ ...s, points }, SIZE);
    expect(svg).toContain('class="qp-region-reversed"');
    expect(svg).toContain('>reversed</text>');
    expect(svg).toMatch(/clip-path="url\(#qp[a-z0-9]+-clip\)"/);
  });

  it('titles the chart in words and lets the keyboard reach it', () => {
    const svg = renderOutputCharacteristicSvg(sweep(), SIZE);
    expect(svg).toMatch(/<title id="qp[a-z0-9]+-title">Mirror output Q2 of the simple current mirror on Q1 \(NPN\)<\/title>/);
    expect(svg).toMatch(/<svg [^>]*tabindex="0"/);
    expect(renderCornerTableHtml(sweep())).toMatch(/<table class="qp-corners" tabindex="0">/);
  });

  it('spans the corner spread bar from the lowest to the highest corner current', () => {
    const svg = renderOutputCharacteristicSvg(sweep(), SIZE);
    expect(attr(svg, 'qp-spread', 'data-low')).toBeCloseTo(0.96e-3, 12);
    expect(attr(svg, 'qp-spread', 'data-high')).toBeCloseTo(1.03e-3, 12);
  });

  it('lists every corner in the table with its current and change from the nominal solve', () => {
    const html = renderCornerTableHtml(sweep({ operatingV: 0.2, operatingI: 1e-3 }));
    expect(html).toContain('<th scope="row">beta low</th><td>960 µA</td><td>−4 %</td>');
    expect(html).toContain('<th scope="row">hot 125 °C</th><td>1.03 mA</td><td>+3 %</td>');
    expect(html).toMatch(/across the corners: 960 µA to 1\.03 mA; nominal 1 mA/);
    // A corner identical to nominal reads as no change, not as an interpolation error.
    expect(renderCornerTableHtml(sweep({ operatingI: 362e-6, cornerSpread: [{ label: 'nominal supply, 27 °C', i: 362e-6 }] }))).toContain('<td>362 µA</td><td>0 %</td>');
  });
});

describe('escaping and finite output', () => {
  it('escapes device, node and corner names', () => {
    const hostile = sweep({
      device: 'Q<1>&"x"',
      node: "<out'>",
      cornerSpread: [{ label: '<script>alert(1)</script>', i: 1e-3 }],
    });
    const svg = renderOutputCharacteristicSvg(hostile, SIZE);
    const html = renderPanelHtml(hostile, { nonce: 'abc123', documentLabel: 'a<b>.cir' });
    for (const text of [svg, html]) {
      expect(text).not.toContain('<script');
      expect(text).not.toContain('<1>');
      expect(text).not.toContain("<out'>");
    }
    expect(svg).toContain('Q&lt;1&gt;&amp;&quot;x&quot;');
    expect(svg).toContain('&lt;out&#39;&gt;');
    expect(html).toContain('&lt;script&gt;alert(1)&lt;/script&gt;');
    expect(html).toContain('a&lt;b&gt;.cir');
    // Source: XML 1.0 (W3C, 5th ed.), section 2.4 — the five predefined entities.
    expect(escapeXml(`&<>"'`)).toBe('&amp;&lt;&gt;&quot;&#39;');
  });

  /** Every number written into an attribute of the SVG parses to a finite value. */
  function checkFinite(result: OutputCharacteristicResult): string {
    const svg = renderOutputCharacteristicSvg(result, SIZE);
    expect(svg).not.toMatch(/NaN|Infinity/);
    for (const m of svg.matchAll(/\b(x|y|x1|x2|y1|y2|cx|cy|r|width|height|data-[a-z]+)="([^"]*)"/g)) {
      expect(Number.isFinite(Number(m[2])), `${m[1]}="${m[2]}"`).toBe(true);
    }
    for (const m of svg.matchAll(/points="([^"]*)"/g)) {
      for (const pair of m[1]!.split(' ')) for (const c of pair.split(',')) expect(Number.isFinite(Number(c))).toBe(true);
    }
    return svg;
  }

  it('drops non-finite sweep points and markers and says so', () => {
    const s = sweep();
    const bad = { ...s, points: [...s.points, { v: NaN, i: 1e-3 }, { v: 2, i: Infinity }], edgeV: NaN, operatingV: Infinity, operatingI: NaN, cornerSpread: [{ label: 'cold', i: NaN }] };
    checkFinite(bad);
    const layout = layoutOutputCharacteristic(bad, SIZE)!;
    expect(layout.notes).toContain('2 of 53 sweep points were not finite numbers and are left out.');
    expect(layout.edge).toBeUndefined();
    expect(layout.operating).toBeUndefined();
    expect(renderCornerTableHtml(bad)).toContain('<td>not available</td>');
  });

  it('draws a flat or single-voltage sweep without dividing by zero', () => {
    checkFinite(sweep({ points: [{ v: 1, i: 1e-3 }, { v: 2, i: 1e-3 }], cornerSpread: [] }));
    checkFinite(sweep({ points: [{ v: 1, i: 0 }, { v: 1, i: 0 }], edgeV: 1, operatingV: 1, cornerSpread: [] }));
  });

  it('explains, instead of drawing, when fewer than two points are usable', () => {
    const svg = checkFinite(sweep({ points: [{ v: NaN, i: NaN }] }));
    expect(svg).toContain('fewer than two drawable points (1 received)');
  });

  it('survives a nonsensical chart size', () => {
    checkFinite(sweep());
    const svg = renderOutputCharacteristicSvg(sweep(), { width: NaN, height: -5 });
    expect(svg).not.toMatch(/NaN|Infinity/);
  });
});

describe('panel page', () => {
  it('allows no script and no outside resource; only the nonce-tagged style block', () => {
    const csp = panelContentSecurityPolicy('n0nce');
    expect(csp).toMatch(/default-src 'none'/);
    expect(csp).toMatch(/script-src 'none'/);
    expect(csp).not.toMatch(/unsafe-inline|unsafe-eval|https?:/);
    const html = renderPanelHtml(sweep(), { nonce: 'n0nce', documentLabel: 'sensor-bias.cir' });
    expect(html).toContain(`content="${csp}"`);
    expect(html).toContain('<style nonce="n0nce">');
    expect(html).not.toMatch(/<script|\son[a-z]+=/i);
  });

  it('titles the chart with the title in words from the engine, escaped, and never with the internal structure id', () => {
    const html = renderPanelHtml(sweep({ title: 'Widlar output Q<1> of the simple current mirror on Q1 (NPN)' }), { nonce: 'n', documentLabel: 'x.cir' });
    expect(html).toContain('<h1 tabindex="-1">Widlar output Q&lt;1&gt; of the simple current mirror on Q1 (NPN)</h1>');
    expect(renderPanelHtml(sweep(), { nonce: 'n', documentLabel: 'x.cir' })).not.toContain('mirror-1');
  });
});

describe('the drift plot', () => {
  it('draws the current against temperature in order, with both axes titled, and a note without points', async () => {
    const { renderDriftSvg } = await import('../../../shared-analysis/src/view/plot');
    const base: OutputCharacteristicResult = { device: 'Q2', structureId: 's', title: 'Mirror output Q2', technology: 'npn', node: 'out', points: [], edgeV: 0, activeSide: 'above', operatingV: 0, operatingI: 1e-3, range: { low: 0, high: 5, rails: [] }, cornerSpread: [] };
    const svg = renderDriftSvg({ ...base, drift: [{ t: 125, i: 1.1e-3 }, { t: -40, i: 0.9e-3 }, { t: 27, i: 1e-3 }] }, { width: 480, height: 240 });
    expect(svg).toContain('Temperature (°C)');
    expect(svg).toMatch(/Output current \((m|µ)A\)/);
    const pts = /points="([^"]+)"/.exec(svg)![1].split(' ').map((p) => p.split(',').map(Number));
    expect(pts).toHaveLength(3);
    // Sorted by temperature, left to right, and the current rising with it goes up the page (smaller y).
    expect(pts[0][0]).toBeLessThan(pts[1][0]);
    expect(pts[1][0]).toBeLessThan(pts[2][0]);
    expect(pts[0][1]).toBeGreaterThan(pts[2][1]);
    expect(renderDriftSvg({ ...base }, { width: 480, height: 240 })).toContain('No drift sweep');
  });
});

describe('the Monte Carlo histogram', () => {
  const base = (): OutputCharacteristicResult => ({ device: 'Q2', structureId: 's', title: 'Mirror output Q2', technology: 'npn', node: 'out', points: [], edgeV: 0, activeSide: 'above', operatingV: 0, operatingI: 1e-3, range: { low: 0, high: 5, rails: [] }, cornerSpread: [] });
  const figures = { runs: 500, converged: 500, mean: 1.001e-3, sigma: 2e-5, min: 0.94e-3, max: 1.06e-3, histogram: [1, 4, 20, 60, 110, 130, 100, 50, 20, 5], nominal: 1e-3, linearSigma: 2.1e-5, target: { low: 0.95e-3, high: 1.05e-3 }, yield: 0.994, predictedYield: 0.98 };

  it('draws one bar per non-empty bin, at heights in proportion to its runs, with the linear prediction and the target window', async () => {
    const { renderHistogramSvg } = await import('../../../shared-analysis/src/view/plot');
    const svg = renderHistogramSvg({ ...base(), monteCarlo: figures }, { width: 600, height: 300 });
    const bars = [...svg.matchAll(/<rect class="qp-bar" x="([^"]+)" y="([^"]+)" width="([^"]+)" height="([^"]+)"/g)].map((m) => m.slice(1).map(Number));
    expect(bars).toHaveLength(10);
    // Heights in proportion to the counts (130 runs against 10 times fewer, 13).
    const h = bars.map((b) => b[3]);
    expect(h[5] / h[8]).toBeCloseTo(130 / 20, 6);
    // Left to right in current.
    for (let k = 1; k < bars.length; k++) expect(bars[k][0]).toBeGreaterThan(bars[k - 1][0]);
    expect(svg).toContain('class="qp-predicted"');
    expect((svg.match(/class="qp-window"/g) ?? []).length).toBe(2);
    expect(svg).toMatch(/Output current \((m|µ)A\)/);
    expect(svg).toContain('Runs per bin');
    // Reachable by keyboard and read as one image with its title and a description of the figures.
    expect(svg).toMatch(/role="img" tabindex="0" aria-labelledby="[^"]+-title [^"]+-desc"/);
    expect(svg).toContain('500 of 500 runs');
    expect(svg).not.toMatch(/NaN|Infinity/);
  });

  it('scales the linear prediction so its area is the runs times the bin width (a normal density)', async () => {
    const { renderHistogramSvg } = await import('../../../shared-analysis/src/view/plot');
    // A flat histogram far narrower than the prediction: the curve's peak is N·w/(σ·√(2π)) runs (normal density; common practice).
    const mc = { ...figures, histogram: [50, 50, 50, 50, 50, 50, 50, 50, 50, 50], linearSigma: 6e-5, target: undefined, yield: undefined, predictedYield: undefined };
    const svg = renderHistogramSvg({ ...base(), monteCarlo: mc }, { width: 600, height: 300 });
    const peak = (500 * 1.2e-5) / (6e-5 * Math.sqrt(2 * Math.PI));
    const ys = /class="qp-predicted" points="([^"]+)"/.exec(svg)![1].split(' ').map((p) => Number(p.split(',')[1]));
    const bar = /<rect class="qp-bar" x="[^"]+" y="([^"]+)" width="[^"]+" height="([^"]+)"/.exec(svg)!;
    const bottom = Number(bar[1]) + Number(bar[2]);
    const perRun = Number(bar[2]) / 50;
    expect((bottom - Math.min(...ys)) / perRun).toBeCloseTo(peak, 0);
  });

  it('says how to get runs when there are none, and the panel shows the histogram section either way', async () => {
    const { renderHistogramSvg, monteCarloSentence } = await import('../../../shared-analysis/src/view/plot');
    expect(renderHistogramSvg(base(), { width: 600, height: 300 })).toContain('No Monte Carlo runs');
    expect(monteCarloSentence(base())).toMatch(/Run Monte Carlo on this netlist/);
    expect(monteCarloSentence({ ...base(), monteCarlo: figures })).toMatch(/^500 of 500 Monte Carlo runs: mean 1(\.\d+)? mA, σ 20(\.0)? µA \(2 %\).* 99\.4 % of the runs inside the target window \(predicted 98 %\)\.$/);
    const without = renderPanelHtml(sweep(), { nonce: 'n', documentLabel: 'x.cir' });
    expect(without).toContain('Spread over Monte Carlo runs');
    expect(without).not.toContain('qp-histogram');
    const withRuns = renderPanelHtml(sweep({ monteCarlo: figures }), { nonce: 'n', documentLabel: 'x.cir' });
    expect(withRuns).toContain('class="qp-chart qp-histogram"');
  });
});

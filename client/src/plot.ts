// Lays out and draws a mirror output characteristic (output current against output-node voltage) as a self-contained SVG string.
import type { OutputCharacteristicResult } from '../../server/src/protocol';
import { formatEngineering, formatPercent } from '../../shared-analysis/src/fixes/format';
import { maxOf, minOf } from '../../shared-analysis/src/arrays';

/** Pixel size of the drawing. */
export interface PlotSize {
  width: number;
  height: number;
}

/** One axis: the data range it shows, its ticks, and the SI prefix its labels use. */
export interface AxisLayout {
  min: number;
  max: number;
  ticks: { value: number; label: string; px: number }[];
  /** Power of ten the tick labels are divided by (a multiple of 3). */
  exponent: number;
  /** Axis title including the unit with its prefix, e.g. `Output current (mA)`. */
  title: string;
}

/** Where everything goes, in pixels; the SVG is a direct rendering of this. */
export interface PlotLayout {
  width: number;
  height: number;
  plot: { left: number; top: number; right: number; bottom: number };
  x: AxisLayout;
  y: AxisLayout;
  /** The sweep, finite points only, sorted by voltage. */
  curve: { px: number; py: number }[];
  /** Vertical marker at the edge of the active region, when the edge is known and inside the plot. */
  edge?: { volts: number; px: number };
  /** The operating point on the curve, when known. */
  operating?: { volts: number; amps: number; px: number; py: number };
  /** The corner spread at the operating voltage: lowest and highest corner current. */
  spread?: { low: number; high: number; px: number; pyLow: number; pyHigh: number };
  /** Sentences about what could not be drawn (non-finite values, missing markers). */
  notes: string[];
}

const SI_PREFIX: Record<number, string> = { 12: 'T', 9: 'G', 6: 'M', 3: 'k', 0: '', [-3]: 'm', [-6]: 'µ', [-9]: 'n', [-12]: 'p', [-15]: 'f' };
const MINUS = '\u2212';

/**
 * The nicest number of the form {1, 2, 5} × 10^k near `x`: rounded when `round`, else the next one up.
 * Source: P. S. Heckbert, "Nice Numbers for Graph Labels", Graphics Gems, Academic Press, 1990.
 */
export function niceNumber(x: number, round: boolean): number {
  const exp = Math.floor(Math.log10(x));
  const f = x / 10 ** exp;
  let nf: number;
  if (round) nf = f < 1.5 ? 1 : f < 3 ? 2 : f < 7 ? 5 : 10;
  else nf = f <= 1 ? 1 : f <= 2 ? 2 : f <= 5 ? 5 : 10;
  return nf * 10 ** exp;
}

/**
 * Ticks covering [min, max] at a nice step, about `count` of them (Heckbert's loose labelling).
 * Returns the widened range and the tick values; `min < max` is required.
 */
export function niceTicks(min: number, max: number, count: number): { min: number; max: number; step: number; values: number[] } {
  const range = niceNumber(max - min, false);
  const step = niceNumber(range / Math.max(1, count - 1), true);
  const lo = Math.floor(min / step) * step;
  const hi = Math.ceil(max / step) * step;
  const values: number[] = [];
  // Counting steps (rather than adding) keeps 0.1 + 0.2 style error out of the tick values.
  const n = Math.round((hi - lo) / step);
  for (let k = 0; k <= n; k++) values.push(cleanFloat(lo + k * step));
  return { min: cleanFloat(lo), max: cleanFloat(hi), step, values };
}

/**
 * Ticks for a chart axis: Heckbert's loose labelling, then one step finer when the loose range
 * wastes more than a sixth of the axis (0…12 V gets 2 V steps to 12 V rather than 5 V steps to 15 V).
 */
export function axisTicks(min: number, max: number, count: number): { min: number; max: number; step: number; values: number[] } {
  const loose = niceTicks(min, max, count);
  if (loose.max - loose.min <= 1.2 * (max - min)) return loose;
  const step = niceNumber(loose.step / 2, true);
  const lo = Math.floor(min / step) * step;
  const hi = Math.ceil(max / step) * step;
  const n = Math.round((hi - lo) / step);
  if (n > 2 * count) return loose;
  const values: number[] = [];
  for (let k = 0; k <= n; k++) values.push(cleanFloat(lo + k * step));
  return { min: cleanFloat(lo), max: cleanFloat(hi), step, values };
}

function cleanFloat(v: number): number {
  const r = Number(v.toPrecision(12));
  return r === 0 ? 0 : r; // no negative zero
}

/** Engineering exponent (multiple of 3) that suits the largest magnitude on an axis. */
function axisExponent(values: number[]): number {
  const m = maxOf(values.map(Math.abs));
  if (!(m > 0)) return 0;
  const e = Math.floor(Math.log10(m) / 3) * 3;
  return Math.max(-15, Math.min(12, e));
}

function tickLabel(value: number, exponent: number, step: number): string {
  const scaled = value / 10 ** exponent;
  const scaledStep = step / 10 ** exponent;
  const decimals = Math.max(0, Math.min(6, -Math.floor(Math.log10(scaledStep) + 1e-9)));
  const text = Math.abs(scaled).toFixed(decimals);
  if (Number(text) === 0) return '0';
  return (scaled < 0 ? MINUS : '') + text;
}

function buildAxis(min: number, max: number, count: number, unit: string, name: string, toPx: (fraction: number) => number): AxisLayout {
  const t = axisTicks(min, max, count);
  const exponent = axisExponent([t.min, t.max]);
  const span = t.max - t.min;
  return {
    min: t.min,
    max: t.max,
    exponent,
    title: `${name} (${SI_PREFIX[exponent] ?? ''}${unit})`,
    ticks: t.values.map((value) => ({ value, label: tickLabel(value, exponent, t.step), px: toPx((value - t.min) / span) })),
  };
}

/** Widens a degenerate range so an axis can be drawn. */
function spanOf(lo: number, hi: number, fallback: number): [number, number] {
  if (hi > lo) return [lo, hi];
  const pad = Math.abs(lo) > 0 ? Math.abs(lo) * 0.1 : fallback;
  return [lo - pad, hi + pad];
}

/** Linear interpolation of the curve's current at `v`, holding the end values beyond the sweep. */
function currentAt(points: { v: number; i: number }[], v: number): number {
  if (v <= points[0]!.v) return points[0]!.i;
  const last = points[points.length - 1]!;
  if (v >= last.v) return last.i;
  for (let k = 1; k < points.length; k++) {
    const a = points[k - 1]!;
    const b = points[k]!;
    if (v <= b.v) return b.v === a.v ? b.i : a.i + ((b.i - a.i) * (v - a.v)) / (b.v - a.v);
  }
  return last.i;
}

/**
 * Computes the positions of everything in the chart. Non-finite numbers in the result are
 * dropped and reported in `notes`; the layout itself only ever holds finite numbers.
 * Returns undefined when fewer than two sweep points are drawable.
 */
export function layoutOutputCharacteristic(result: OutputCharacteristicResult, size: PlotSize): PlotLayout | undefined {
  const width = Math.max(240, Number.isFinite(size.width) ? size.width : 0);
  const height = Math.max(180, Number.isFinite(size.height) ? size.height : 0);
  const notes: string[] = [];
  const all = Array.isArray(result.points) ? result.points : [];
  const points = all.filter((p) => Number.isFinite(p?.v) && Number.isFinite(p?.i)).sort((a, b) => a.v - b.v);
  if (points.length < all.length) notes.push(`${all.length - points.length} of ${all.length} sweep points were not finite numbers and are left out.`);
  if (points.length < 2) return undefined;

  const edgeKnown = Number.isFinite(result.edgeV);
  const opKnown = Number.isFinite(result.operatingV);
  if (!edgeKnown) notes.push('The edge of the active region is not known, so it is not marked.');
  if (!opKnown) notes.push('The operating point is not known, so it is not marked.');
  const corners = (Array.isArray(result.cornerSpread) ? result.cornerSpread : []).filter((c) => Number.isFinite(c?.i));

  const xs = points.map((p) => p.v).concat(edgeKnown ? [result.edgeV] : [], opKnown ? [result.operatingV] : []);
  const ys = points.map((p) => p.i).concat(corners.map((c) => c.i), [0]);
  const [x0, x1] = spanOf(minOf(xs), maxOf(xs), 0.5);
  const [y0, y1] = spanOf(minOf(ys), maxOf(ys), 1e-6);

  const plot = { left: 72, top: 34, right: width - 24, bottom: height - 52 };
  const xCount = Math.max(3, Math.min(10, Math.round((plot.right - plot.left) / 90)));
  const yCount = Math.max(3, Math.min(8, Math.round((plot.bottom - plot.top) / 60)));
  const x = buildAxis(x0, x1, xCount, 'V', `Voltage at node ${result.node}`, (f) => plot.left + f * (plot.right - plot.left));
  const y = buildAxis(y0, y1, yCount, 'A', 'Output current', (f) => plot.bottom - f * (plot.bottom - plot.top));
  const px = (v: number) => plot.left + ((v - x.min) / (x.max - x.min)) * (plot.right - plot.left);
  const py = (i: number) => plot.bottom - ((i - y.min) / (y.max - y.min)) * (plot.bottom - plot.top);

  const layout: PlotLayout = { width, height, plot, x, y, curve: points.map((p) => ({ px: px(p.v), py: py(p.i) })), notes };
  if (edgeKnown) layout.edge = { volts: result.edgeV, px: px(result.edgeV) };
  if (opKnown) {
    const amps = currentAt(points, result.operatingV);
    layout.operating = { volts: result.operatingV, amps, px: px(result.operatingV), py: py(amps) };
    if (corners.length > 0) {
      const low = minOf(corners.map((c) => c.i));
      const high = maxOf(corners.map((c) => c.i));
      layout.spread = { low, high, px: px(result.operatingV), pyLow: py(low), pyHigh: py(high) };
    }
  }
  return layout;
}

/** Escapes text for SVG/HTML element content and attribute values. */
export function escapeXml(text: string): string {
  return String(text).replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

/** A coordinate for the SVG text: two decimals, never NaN (callers only pass finite numbers). */
function n(v: number): string {
  return (Math.round(v * 100) / 100).toString();
}

/**
 * Draws the output characteristic as an SVG document fragment. Colours come from CSS classes
 * (`qp-*`, see OUTPUT_CHARACTERISTIC_CSS) so the panel can map them to the editor theme.
 */
export function renderOutputCharacteristicSvg(result: OutputCharacteristicResult, size: PlotSize): string {
  const layout = layoutOutputCharacteristic(result, size);
  const device = escapeXml(result.device ?? '');
  const node = escapeXml(result.node ?? '');
  if (!layout) {
    const w = Math.max(240, Number.isFinite(size.width) ? size.width : 0);
    const h = Math.max(180, Number.isFinite(size.height) ? size.height : 0);
    const count = Array.isArray(result.points) ? result.points.length : 0;
    return [
      `<svg xmlns="http://www.w3.org/2000/svg" class="qp-chart" viewBox="0 0 ${w} ${h}" width="${w}" height="${h}" role="img">`,
      `<title>Output characteristic of ${device}</title>`,
      `<text class="qp-note" x="${n(w / 2)}" y="${n(h / 2)}" text-anchor="middle">The sweep of ${device} returned fewer than two drawable points (${count} received), so there is no curve to draw.</text>`,
      '</svg>',
    ].join('\n');
  }
  const { plot, x, y } = layout;
  const out: string[] = [];
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" class="qp-chart" viewBox="0 0 ${layout.width} ${layout.height}" width="${layout.width}" height="${layout.height}" role="img" aria-labelledby="qp-title qp-desc">`);
  out.push(`<title id="qp-title">Output characteristic of ${device} at node ${node}</title>`);
  out.push(`<desc id="qp-desc">Output current of ${device} against the voltage at node ${node}${layout.edge ? `, with the edge of the active region at ${escapeXml(formatEngineering(layout.edge.volts, { unit: 'V' }))}` : ''}${layout.operating ? ` and the operating point at ${escapeXml(formatEngineering(layout.operating.volts, { unit: 'V' }))}, ${escapeXml(formatEngineering(layout.operating.amps, { unit: 'A' }))}` : ''}.</desc>`);

  // The region left of the edge is where the output is no longer a current source.
  if (layout.edge && layout.edge.px > plot.left) {
    const right = Math.min(layout.edge.px, plot.right);
    out.push(`<rect class="qp-region-outside" x="${n(plot.left)}" y="${n(plot.top)}" width="${n(right - plot.left)}" height="${n(plot.bottom - plot.top)}"/>`);
  }
  for (const t of x.ticks) out.push(`<line class="qp-grid" x1="${n(t.px)}" y1="${n(plot.top)}" x2="${n(t.px)}" y2="${n(plot.bottom)}"/>`);
  for (const t of y.ticks) out.push(`<line class="qp-grid" x1="${n(plot.left)}" y1="${n(t.px)}" x2="${n(plot.right)}" y2="${n(t.px)}"/>`);
  out.push(`<rect class="qp-frame" x="${n(plot.left)}" y="${n(plot.top)}" width="${n(plot.right - plot.left)}" height="${n(plot.bottom - plot.top)}"/>`);

  out.push('<g class="qp-axis qp-axis-x">');
  for (const t of x.ticks) {
    out.push(`<line class="qp-tick" x1="${n(t.px)}" y1="${n(plot.bottom)}" x2="${n(t.px)}" y2="${n(plot.bottom + 5)}"/>`);
    out.push(`<text class="qp-tick-label" data-value="${t.value}" x="${n(t.px)}" y="${n(plot.bottom + 18)}" text-anchor="middle">${escapeXml(t.label)}</text>`);
  }
  out.push(`<text class="qp-axis-title" x="${n((plot.left + plot.right) / 2)}" y="${n(layout.height - 12)}" text-anchor="middle">${escapeXml(x.title)}</text>`);
  out.push('</g>');
  out.push('<g class="qp-axis qp-axis-y">');
  for (const t of y.ticks) {
    out.push(`<line class="qp-tick" x1="${n(plot.left - 5)}" y1="${n(t.px)}" x2="${n(plot.left)}" y2="${n(t.px)}"/>`);
    out.push(`<text class="qp-tick-label" data-value="${t.value}" x="${n(plot.left - 8)}" y="${n(t.px + 4)}" text-anchor="end">${escapeXml(t.label)}</text>`);
  }
  const yMid = (plot.top + plot.bottom) / 2;
  out.push(`<text class="qp-axis-title" x="16" y="${n(yMid)}" text-anchor="middle" transform="rotate(-90 16 ${n(yMid)})">${escapeXml(y.title)}</text>`);
  out.push('</g>');

  out.push(`<polyline class="qp-curve" points="${layout.curve.map((p) => `${n(p.px)},${n(p.py)}`).join(' ')}"/>`);

  if (layout.edge) {
    const label = `edge of active region ${formatEngineering(layout.edge.volts, { unit: 'V' })}`;
    const anchor = layout.edge.px > (plot.left + plot.right) / 2 ? 'end' : 'start';
    const dx = anchor === 'end' ? -4 : 4;
    out.push(`<line class="qp-edge" data-volts="${layout.edge.volts}" x1="${n(layout.edge.px)}" y1="${n(plot.top)}" x2="${n(layout.edge.px)}" y2="${n(plot.bottom)}"/>`);
    out.push(`<text class="qp-edge-label" x="${n(layout.edge.px + dx)}" y="${n(plot.top - 8)}" text-anchor="${anchor}">${escapeXml(label)}</text>`);
  }
  if (layout.spread) {
    const s = layout.spread;
    out.push(`<g class="qp-spread" data-low="${s.low}" data-high="${s.high}">`);
    out.push(`<line x1="${n(s.px)}" y1="${n(s.pyLow)}" x2="${n(s.px)}" y2="${n(s.pyHigh)}"/>`);
    out.push(`<line x1="${n(s.px - 6)}" y1="${n(s.pyLow)}" x2="${n(s.px + 6)}" y2="${n(s.pyLow)}"/>`);
    out.push(`<line x1="${n(s.px - 6)}" y1="${n(s.pyHigh)}" x2="${n(s.px + 6)}" y2="${n(s.pyHigh)}"/>`);
    out.push('</g>');
  }
  if (layout.operating) {
    const o = layout.operating;
    const label = `operating point ${formatEngineering(o.volts, { unit: 'V' })}, ${formatEngineering(o.amps, { unit: 'A' })}`;
    const anchor = o.px > (plot.left + plot.right) / 2 ? 'end' : 'start';
    const dx = anchor === 'end' ? -10 : 10;
    out.push(`<circle class="qp-operating" data-volts="${o.volts}" data-amps="${o.amps}" cx="${n(o.px)}" cy="${n(o.py)}" r="5"/>`);
    out.push(`<text class="qp-operating-label" x="${n(o.px + dx)}" y="${n(Math.max(plot.top + 12, o.py - 10))}" text-anchor="${anchor}">${escapeXml(label)}</text>`);
  }
  out.push('</svg>');
  return out.join('\n');
}

/**
 * The corner spread as a small HTML table: each corner's output current and its deviation
 * from the current at the operating point.
 */
export function renderCornerTableHtml(result: OutputCharacteristicResult): string {
  const corners = Array.isArray(result.cornerSpread) ? result.cornerSpread : [];
  if (corners.length === 0) return '<p class="qp-note">No corner results came with this sweep (corners may be turned off in the settings).</p>';
  const finite = corners.filter((c) => Number.isFinite(c?.i));
  const points = (Array.isArray(result.points) ? result.points : []).filter((p) => Number.isFinite(p?.v) && Number.isFinite(p?.i)).sort((a, b) => a.v - b.v);
  const nominal = points.length > 0 && Number.isFinite(result.operatingV) ? currentAt(points, result.operatingV) : undefined;
  const rows = corners.map((c) => {
    const amps = Number.isFinite(c?.i) ? formatEngineering(c.i, { unit: 'A' }) : 'not available';
    const dev = nominal !== undefined && nominal !== 0 && Number.isFinite(c?.i) ? formatPercent((c.i - nominal) / nominal) : '—';
    return `<tr><th scope="row">${escapeXml(c?.label ?? '')}</th><td>${escapeXml(amps)}</td><td>${escapeXml(dev)}</td></tr>`;
  });
  const range = finite.length > 0
    ? `<caption>Output current at the operating point across the corners: ${escapeXml(formatEngineering(minOf(finite.map((c) => c.i)), { unit: 'A' }))} to ${escapeXml(formatEngineering(maxOf(finite.map((c) => c.i)), { unit: 'A' }))}</caption>`
    : '<caption>Output current at the operating point across the corners</caption>';
  return [
    '<table class="qp-corners">',
    range,
    '<thead><tr><th scope="col">Corner</th><th scope="col">Output current</th><th scope="col">Change from nominal</th></tr></thead>',
    `<tbody>${rows.join('')}</tbody>`,
    '</table>',
  ].join('\n');
}

/** Theme-aware styles for the chart's classes, taken from the editor's CSS variables. */
export const OUTPUT_CHARACTERISTIC_CSS = `
body { color: var(--vscode-foreground); background: var(--vscode-editor-background); font-family: var(--vscode-font-family); font-size: var(--vscode-font-size); padding: 0 16px 16px; }
h1 { font-size: 1.2em; font-weight: 600; margin: 12px 0 4px; }
.qp-subtitle, .qp-note { color: var(--vscode-descriptionForeground); }
.qp-chart { max-width: 100%; height: auto; font-family: var(--vscode-font-family); font-size: 13px; }
.qp-chart text { fill: var(--vscode-foreground); }
.qp-chart .qp-note { fill: var(--vscode-descriptionForeground); }
.qp-frame { fill: none; stroke: var(--vscode-editorWidget-border, var(--vscode-foreground)); stroke-width: 1; }
.qp-grid { stroke: var(--vscode-editorIndentGuide-background1, var(--vscode-editorWidget-border)); stroke-width: 1; opacity: 0.6; }
.qp-tick { stroke: var(--vscode-foreground); stroke-width: 1; }
.qp-curve { fill: none; stroke: var(--vscode-charts-blue); stroke-width: 2; }
.qp-region-outside { fill: var(--vscode-charts-red); opacity: 0.12; }
.qp-edge { stroke: var(--vscode-charts-red); stroke-width: 1.5; stroke-dasharray: 6 4; }
.qp-chart .qp-edge-label { fill: var(--vscode-charts-red); }
.qp-operating { fill: var(--vscode-charts-orange); stroke: var(--vscode-editor-background); stroke-width: 1.5; }
.qp-spread line { stroke: var(--vscode-charts-orange); stroke-width: 2; }
.qp-corners { border-collapse: collapse; margin-top: 12px; }
.qp-corners caption { text-align: left; margin-bottom: 4px; color: var(--vscode-descriptionForeground); }
.qp-corners th, .qp-corners td { border: 1px solid var(--vscode-editorWidget-border, var(--vscode-foreground)); padding: 2px 10px; text-align: left; }
.qp-corners td { font-variant-numeric: tabular-nums; }
`;

/**
 * The output current against temperature (the drift sweep) as an SVG fragment, with the same
 * classes as the output characteristic; a note instead when fewer than two points came.
 */
export function renderDriftSvg(result: OutputCharacteristicResult, size: PlotSize): string {
  const width = Math.max(240, Number.isFinite(size.width) ? size.width : 0);
  const height = Math.max(160, Number.isFinite(size.height) ? size.height : 0);
  const device = escapeXml(result.device ?? '');
  const pts = (Array.isArray(result.drift) ? result.drift : []).filter((p) => Number.isFinite(p?.t) && Number.isFinite(p?.i)).sort((a, b) => a.t - b.t);
  if (pts.length < 2) {
    return `<svg xmlns="http://www.w3.org/2000/svg" class="qp-chart" viewBox="0 0 ${width} ${height}" width="${width}" height="${height}" role="img"><title>Drift of ${device}</title><text class="qp-note" x="${n(width / 2)}" y="${n(height / 2)}" text-anchor="middle">No drift sweep came with this result.</text></svg>`;
  }
  const plot = { left: 72, top: 20, right: width - 24, bottom: height - 52 };
  const [x0, x1] = spanOf(minOf(pts.map((p) => p.t)), maxOf(pts.map((p) => p.t)), 1);
  const [y0, y1] = spanOf(minOf(pts.map((p) => p.i)), maxOf(pts.map((p) => p.i)), 1e-6);
  const x = buildAxis(x0, x1, Math.max(3, Math.min(10, Math.round((plot.right - plot.left) / 90))), '°C', 'Temperature', (f) => plot.left + f * (plot.right - plot.left));
  const y = buildAxis(y0, y1, Math.max(3, Math.min(6, Math.round((plot.bottom - plot.top) / 50))), 'A', 'Output current', (f) => plot.bottom - f * (plot.bottom - plot.top));
  const px = (t: number) => plot.left + ((t - x.min) / (x.max - x.min)) * (plot.right - plot.left);
  const py = (i: number) => plot.bottom - ((i - y.min) / (y.max - y.min)) * (plot.bottom - plot.top);
  const out: string[] = [];
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" class="qp-chart qp-drift" viewBox="0 0 ${width} ${height}" width="${width}" height="${height}" role="img" aria-labelledby="qp-drift-title">`);
  out.push(`<title id="qp-drift-title">Output current of ${device} against temperature, ${escapeXml(formatEngineering(pts[0].t, { unit: '°C' }))} to ${escapeXml(formatEngineering(pts[pts.length - 1].t, { unit: '°C' }))}</title>`);
  for (const t of x.ticks) out.push(`<line class="qp-grid" x1="${n(t.px)}" y1="${n(plot.top)}" x2="${n(t.px)}" y2="${n(plot.bottom)}"/>`);
  for (const t of y.ticks) out.push(`<line class="qp-grid" x1="${n(plot.left)}" y1="${n(t.px)}" x2="${n(plot.right)}" y2="${n(t.px)}"/>`);
  out.push(`<rect class="qp-frame" x="${n(plot.left)}" y="${n(plot.top)}" width="${n(plot.right - plot.left)}" height="${n(plot.bottom - plot.top)}"/>`);
  out.push('<g class="qp-axis qp-axis-x">');
  for (const t of x.ticks) out.push(`<text class="qp-tick-label" data-value="${t.value}" x="${n(t.px)}" y="${n(plot.bottom + 18)}" text-anchor="middle">${escapeXml(t.label)}</text>`);
  out.push(`<text class="qp-axis-title" x="${n((plot.left + plot.right) / 2)}" y="${n(height - 12)}" text-anchor="middle">${escapeXml(x.title)}</text>`);
  out.push('</g>');
  out.push('<g class="qp-axis qp-axis-y">');
  for (const t of y.ticks) out.push(`<text class="qp-tick-label" data-value="${t.value}" x="${n(plot.left - 8)}" y="${n(t.px + 4)}" text-anchor="end">${escapeXml(t.label)}</text>`);
  const yMid = (plot.top + plot.bottom) / 2;
  out.push(`<text class="qp-axis-title" x="16" y="${n(yMid)}" text-anchor="middle" transform="rotate(-90 16 ${n(yMid)})">${escapeXml(y.title)}</text>`);
  out.push('</g>');
  out.push(`<polyline class="qp-curve" points="${pts.map((p) => `${n(px(p.t))},${n(py(p.i))}`).join(' ')}"/>`);
  out.push('</svg>');
  return out.join('\n');
}

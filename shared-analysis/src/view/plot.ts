// Lays out and draws a mirror output characteristic (output current against output-node voltage) as a self-contained SVG string,
// for the editor's panel and the HTML report alike.
import type { OutputCharacteristicResult } from '../features/sweep';
import { formatQuantity, formatPercent } from './format';
import { maxOf, minOf } from '../arrays';

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
  /** The band where the output has left its active region: left of the edge for NPN/NMOS outputs, right of it for PNP/PMOS. */
  outside?: { x0: number; x1: number };
  /** Bands of the sweep where the output current is reversed (negative in the output's own direction). */
  reversed: { x0: number; x1: number; v0: number; v1: number }[];
  /** The most negative current of the sweep when it lies below the drawn axis (the curve is clipped there). */
  clippedBelow?: number;
  /** The operating point from the operating-point solve, when known. */
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
  const opKnown = Number.isFinite(result.operatingV) && Number.isFinite(result.operatingI ?? NaN);
  if (!edgeKnown) notes.push('The edge of the active region is not known, so it is not marked.');
  if (!opKnown) notes.push('The operating point is not known, so it is not marked.');
  const corners = (Array.isArray(result.cornerSpread) ? result.cornerSpread : []).filter((c) => Number.isFinite(c?.i));

  const xs = points.map((p) => p.v).concat(edgeKnown ? [result.edgeV] : [], opKnown ? [result.operatingV] : []);
  // The current axis is set by the forward current: a reversed spike is clipped at a sixth of it below zero and said in a note.
  const forward = points.map((p) => p.i).filter((i) => i > 0).concat(corners.map((c) => c.i).filter((i) => i > 0), opKnown && (result.operatingI ?? 0) > 0 ? [result.operatingI!] : []);
  const top = forward.length ? maxOf(forward) : 0;
  const lowest = minOf(points.map((p) => p.i));
  const floor = top > 0 ? Math.max(lowest, -top / 6) : lowest;
  const [x0, x1] = spanOf(minOf(xs), maxOf(xs), 0.5);
  const [y0, y1] = spanOf(Math.min(0, floor), top > 0 ? top : maxOf(points.map((p) => p.i).concat([0])), 1e-6);

  const plot = { left: 72, top: 34, right: width - 24, bottom: height - 52 };
  const xCount = Math.max(3, Math.min(10, Math.round((plot.right - plot.left) / 90)));
  const yCount = Math.max(3, Math.min(8, Math.round((plot.bottom - plot.top) / 60)));
  const x = buildAxis(x0, x1, xCount, 'V', `Voltage at node ${result.node}`, (f) => plot.left + f * (plot.right - plot.left));
  const y = buildAxis(y0, y1, yCount, 'A', 'Output current', (f) => plot.bottom - f * (plot.bottom - plot.top));
  const px = (v: number) => plot.left + ((v - x.min) / (x.max - x.min)) * (plot.right - plot.left);
  const py = (i: number) => plot.bottom - ((i - y.min) / (y.max - y.min)) * (plot.bottom - plot.top);

  const layout: PlotLayout = { width, height, plot, x, y, curve: points.map((p) => ({ px: px(p.v), py: py(p.i) })), reversed: [], notes };
  if (lowest < y.min) {
    layout.clippedBelow = lowest;
    notes.push(`The current reverses to ${formatQuantity(lowest, 'A')}; the curve is cut at the bottom of the axis so the forward current sets the scale.`);
  }
  // Reversed bands: runs of points whose current flows backwards, from midway to the neighbouring points.
  for (let k = 0; k < points.length; k++) {
    if (!(points[k].i < 0)) continue;
    let e = k;
    while (e + 1 < points.length && points[e + 1].i < 0) e++;
    const v0 = k > 0 ? (points[k - 1].v + points[k].v) / 2 : points[k].v;
    const v1 = e + 1 < points.length ? (points[e].v + points[e + 1].v) / 2 : points[e].v;
    layout.reversed.push({ v0, v1, x0: px(v0), x1: px(v1) });
    k = e;
  }
  if (edgeKnown) {
    layout.edge = { volts: result.edgeV, px: px(result.edgeV) };
    const ex = Math.min(plot.right, Math.max(plot.left, layout.edge.px));
    const side = result.activeSide === 'below' ? { x0: ex, x1: plot.right } : { x0: plot.left, x1: ex };
    if (side.x1 > side.x0) layout.outside = side;
  }
  if (opKnown) {
    const amps = result.operatingI!;
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

/** A short id fragment for SVG element ids, so several charts can share one page. */
function idOf(text: string): string {
  let h = 0;
  for (let k = 0; k < text.length; k++) h = (h * 31 + text.charCodeAt(k)) | 0;
  return `qp${(h >>> 0).toString(36)}`;
}

/**
 * Draws the output characteristic as an SVG document fragment. Colours come from CSS classes
 * (`qp-*`, see OUTPUT_CHARACTERISTIC_CSS) so the panel can map them to the editor theme; the
 * bands are hatched and the edge dashed, so nothing depends on colour alone. The chart takes
 * the keyboard focus (tabindex) and describes itself in words for a screen reader.
 */
export function renderOutputCharacteristicSvg(result: OutputCharacteristicResult, size: PlotSize): string {
  const layout = layoutOutputCharacteristic(result, size);
  const device = escapeXml(result.device ?? '');
  const node = escapeXml(result.node ?? '');
  const id = idOf(`${result.structureId}#${result.device}`);
  if (!layout) {
    const w = Math.max(240, Number.isFinite(size.width) ? size.width : 0);
    const h = Math.max(180, Number.isFinite(size.height) ? size.height : 0);
    const count = Array.isArray(result.points) ? result.points.length : 0;
    return [
      `<svg xmlns="http://www.w3.org/2000/svg" class="qp-chart" viewBox="0 0 ${w} ${h}" width="${w}" height="${h}" role="img" tabindex="0">`,
      `<title>Output characteristic of ${device}</title>`,
      `<text class="qp-note" x="${n(w / 2)}" y="${n(h / 2)}" text-anchor="middle">The sweep of ${device} returned fewer than two drawable points (${count} received), so there is no curve to draw.</text>`,
      '</svg>',
    ].join('\n');
  }
  const { plot, x, y } = layout;
  const out: string[] = [];
  const v = (volts: number) => escapeXml(formatQuantity(volts, 'V'));
  const a = (amps: number) => escapeXml(formatQuantity(amps, 'A'));
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" class="qp-chart" viewBox="0 0 ${layout.width} ${layout.height}" width="${layout.width}" height="${layout.height}" role="img" tabindex="0" aria-labelledby="${id}-title ${id}-desc">`);
  out.push(`<title id="${id}-title">${escapeXml(result.title ?? `Output characteristic of ${result.device}`)}</title>`);
  const side = result.activeSide === 'below' ? 'below' : 'above';
  out.push(
    `<desc id="${id}-desc">Output current of ${device} against the voltage at node ${node}` +
      (layout.edge ? `; it is a current source ${side} ${v(layout.edge.volts)} (the edge of its active region)` : '') +
      (layout.operating ? `; the operating point is ${v(layout.operating.volts)}, ${a(layout.operating.amps)}` : '') +
      (layout.reversed.length ? `; the current is reversed between ${layout.reversed.map((r) => `${v(r.v0)} and ${v(r.v1)}`).join(', ')}` : '') +
      '.</desc>',
  );
  out.push('<defs>');
  out.push(`<clipPath id="${id}-clip"><rect x="${n(plot.left)}" y="${n(plot.top)}" width="${n(plot.right - plot.left)}" height="${n(plot.bottom - plot.top)}"/></clipPath>`);
  out.push(`<pattern id="${id}-hatch-out" class="qp-hatch-outside" width="8" height="8" patternUnits="userSpaceOnUse" patternTransform="rotate(45)"><line x1="0" y1="0" x2="0" y2="8"/></pattern>`);
  out.push(`<pattern id="${id}-hatch-rev" class="qp-hatch-reversed" width="6" height="6" patternUnits="userSpaceOnUse"><path d="M0 3h6M3 0v6"/></pattern>`);
  out.push('</defs>');

  // Where the output is no longer a current source: left of the edge for a sink (NPN, NMOS), right of it for a source (PNP, PMOS).
  if (layout.outside) {
    out.push(`<rect class="qp-region-outside qp-${side === 'above' ? 'left' : 'right'}" x="${n(layout.outside.x0)}" y="${n(plot.top)}" width="${n(layout.outside.x1 - layout.outside.x0)}" height="${n(plot.bottom - plot.top)}" fill="url(#${id}-hatch-out)"/>`);
  }
  for (const r of layout.reversed) {
    const x0 = Math.max(plot.left, Math.min(r.x0, r.x1));
    const x1 = Math.min(plot.right, Math.max(r.x0, r.x1));
    if (x1 > x0) out.push(`<rect class="qp-region-reversed" data-from="${r.v0}" data-to="${r.v1}" x="${n(x0)}" y="${n(plot.top)}" width="${n(x1 - x0)}" height="${n(plot.bottom - plot.top)}" fill="url(#${id}-hatch-rev)"/>`);
  }
  for (const t of x.ticks) out.push(`<line class="qp-grid" x1="${n(t.px)}" y1="${n(plot.top)}" x2="${n(t.px)}" y2="${n(plot.bottom)}"/>`);
  for (const t of y.ticks) out.push(`<line class="qp-grid" x1="${n(plot.left)}" y1="${n(t.px)}" x2="${n(plot.right)}" y2="${n(t.px)}"/>`);
  if (y.min < 0 && y.max > 0) {
    const zy = plot.bottom - ((0 - y.min) / (y.max - y.min)) * (plot.bottom - plot.top);
    out.push(`<line class="qp-zero" x1="${n(plot.left)}" y1="${n(zy)}" x2="${n(plot.right)}" y2="${n(zy)}"/>`);
  }
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

  out.push(`<polyline class="qp-curve" clip-path="url(#${id}-clip)" points="${layout.curve.map((p) => `${n(p.px)},${n(p.py)}`).join(' ')}"/>`);

  if (layout.reversed.length) {
    const r = layout.reversed[0];
    const cx = Math.min(plot.right - 4, Math.max(plot.left + 4, (r.x0 + r.x1) / 2));
    out.push(`<text class="qp-reversed-label" x="${n(cx)}" y="${n(plot.bottom - 8)}" text-anchor="middle">reversed</text>`);
  }
  if (layout.edge && layout.edge.px >= plot.left && layout.edge.px <= plot.right) {
    const label = `edge of active region ${formatQuantity(layout.edge.volts, 'V')}`;
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
    const label = `operating point ${formatQuantity(o.volts, 'V')}, ${formatQuantity(o.amps, 'A')}`;
    const anchor = o.px > (plot.left + plot.right) / 2 ? 'end' : 'start';
    const dx = anchor === 'end' ? -10 : 10;
    out.push(`<circle class="qp-operating" data-volts="${o.volts}" data-amps="${o.amps}" cx="${n(o.px)}" cy="${n(o.py)}" r="5"/>`);
    out.push(`<text class="qp-operating-label" x="${n(o.px + dx)}" y="${n(Math.max(plot.top + 12, o.py - 10))}" text-anchor="${anchor}">${escapeXml(label)}</text>`);
  }
  out.push('</svg>');
  return out.join('\n');
}

/**
 * The corner spread as a small HTML table: each corner's output current (from its re-solve) and
 * its change from the nominal solve at the operating point.
 */
export function renderCornerTableHtml(result: OutputCharacteristicResult): string {
  const corners = Array.isArray(result.cornerSpread) ? result.cornerSpread : [];
  if (corners.length === 0) return '<p class="qp-note">No corner results came with this sweep (corners may be turned off in the settings).</p>';
  const finite = corners.filter((c) => Number.isFinite(c?.i));
  const nominal = result.operatingI !== undefined && Number.isFinite(result.operatingI) && result.operatingI !== 0 ? result.operatingI : undefined;
  const rows = corners.map((c) => {
    const amps = Number.isFinite(c?.i) ? formatQuantity(c.i, 'A') : 'not available';
    const dev = nominal !== undefined && Number.isFinite(c?.i) ? formatPercent((c.i - nominal) / Math.abs(nominal)) : '—';
    return `<tr><th scope="row">${escapeXml(c?.label ?? '')}</th><td>${escapeXml(amps)}</td><td>${escapeXml(dev)}</td></tr>`;
  });
  const range = finite.length > 0
    ? `<caption>Output current at the operating point across the corners: ${escapeXml(formatQuantity(minOf(finite.map((c) => c.i)), 'A'))} to ${escapeXml(formatQuantity(maxOf(finite.map((c) => c.i)), 'A'))}${nominal !== undefined ? `; nominal ${escapeXml(formatQuantity(nominal, 'A'))}` : ''}</caption>`
    : '<caption>Output current at the operating point across the corners</caption>';
  return [
    '<table class="qp-corners" tabindex="0">',
    range,
    '<thead><tr><th scope="col">Corner</th><th scope="col">Output current</th><th scope="col">Change from nominal</th></tr></thead>',
    `<tbody>${rows.join('')}</tbody>`,
    '</table>',
  ].join('\n');
}

/**
 * Styles for the chart's classes. In the editor they take the theme's colours (VS Code's CSS
 * variables, with thicker strokes and no translucency in high-contrast themes); elsewhere (the
 * HTML report) the fallbacks give a light page, and a dark one when the reader's system asks.
 */
export const OUTPUT_CHARACTERISTIC_CSS = `
:root { --qp-fg: var(--vscode-foreground, #1d2125); --qp-bg: var(--vscode-editor-background, #ffffff); --qp-muted: var(--vscode-descriptionForeground, #59636e);
  --qp-line: var(--vscode-editorWidget-border, #8c959f); --qp-grid: var(--vscode-editorIndentGuide-background1, #d8dee4);
  --qp-curve: var(--vscode-charts-blue, #1f5fbf); --qp-edge: var(--vscode-charts-red, #b3261e); --qp-op: var(--vscode-charts-orange, #b35900);
  --qp-reversed: var(--vscode-charts-purple, #6f42c1); --qp-focus: var(--vscode-focusBorder, #1f5fbf); }
@media (prefers-color-scheme: dark) { :root:not(.qp-light) { --qp-fg: var(--vscode-foreground, #e6edf3); --qp-bg: var(--vscode-editor-background, #1b1f24);
  --qp-muted: var(--vscode-descriptionForeground, #9198a1); --qp-line: var(--vscode-editorWidget-border, #6e7681); --qp-grid: var(--vscode-editorIndentGuide-background1, #30363d);
  --qp-curve: var(--vscode-charts-blue, #6cb6ff); --qp-edge: var(--vscode-charts-red, #ff7b72); --qp-op: var(--vscode-charts-orange, #f0a04b); --qp-reversed: var(--vscode-charts-purple, #d2a8ff); } }
body { color: var(--qp-fg); background: var(--qp-bg); font-family: var(--vscode-font-family, system-ui, sans-serif); font-size: var(--vscode-font-size, 14px); padding: 0 16px 16px; }
h1 { font-size: 1.2em; font-weight: 600; margin: 12px 0 4px; }
.qp-subtitle, .qp-note { color: var(--qp-muted); }
.qp-chart { max-width: 100%; height: auto; font-family: inherit; font-size: 13px; }
.qp-chart:focus-visible, .qp-corners:focus-visible { outline: 2px solid var(--qp-focus); outline-offset: 2px; }
.qp-chart text { fill: var(--qp-fg); }
.qp-chart .qp-note { fill: var(--qp-muted); }
.qp-frame { fill: none; stroke: var(--qp-line); stroke-width: 1; }
.qp-grid { stroke: var(--qp-grid); stroke-width: 1; }
.qp-zero { stroke: var(--qp-fg); stroke-width: 1; }
.qp-tick { stroke: var(--qp-fg); stroke-width: 1; }
.qp-curve { fill: none; stroke: var(--qp-curve); stroke-width: 2.5; }
.qp-hatch-outside line { stroke: var(--qp-edge); stroke-width: 1.5; opacity: 0.45; }
.qp-hatch-reversed path { stroke: var(--qp-reversed); stroke-width: 1; opacity: 0.5; }
.qp-edge { stroke: var(--qp-edge); stroke-width: 1.5; stroke-dasharray: 6 4; }
.qp-chart .qp-edge-label { fill: var(--qp-edge); }
.qp-chart .qp-reversed-label { fill: var(--qp-reversed); font-style: italic; }
.qp-operating { fill: var(--qp-op); stroke: var(--qp-bg); stroke-width: 1.5; }
.qp-spread line { stroke: var(--qp-op); stroke-width: 2; }
.qp-corners { border-collapse: collapse; margin-top: 12px; }
.qp-corners caption { text-align: left; margin-bottom: 4px; color: var(--qp-muted); }
.qp-corners th, .qp-corners td { border: 1px solid var(--qp-line); padding: 2px 10px; text-align: left; }
.qp-corners td { font-variant-numeric: tabular-nums; }
.qp-bar { fill: var(--qp-curve); fill-opacity: 0.55; stroke: var(--qp-curve); stroke-width: 1; }
.qp-predicted { fill: none; stroke: var(--qp-op); stroke-width: 2; stroke-dasharray: 5 3; }
.qp-nominal { stroke: var(--qp-op); stroke-width: 2; }
.qp-window { stroke: var(--qp-edge); stroke-width: 1.5; stroke-dasharray: 6 4; }
.qp-chart .qp-window-label { fill: var(--qp-edge); }
.qp-chart .qp-predicted-label { fill: var(--qp-op); }
body.vscode-high-contrast .qp-bar, body.vscode-high-contrast-light .qp-bar { fill-opacity: 1; stroke: var(--vscode-contrastBorder, var(--qp-fg)); stroke-width: 1.5; }
body.vscode-high-contrast .qp-predicted, body.vscode-high-contrast-light .qp-predicted, body.vscode-high-contrast .qp-window, body.vscode-high-contrast-light .qp-window { stroke-width: 3; }
body.vscode-high-contrast .qp-curve, body.vscode-high-contrast-light .qp-curve { stroke-width: 3.5; }
body.vscode-high-contrast .qp-hatch-outside line, body.vscode-high-contrast-light .qp-hatch-outside line,
body.vscode-high-contrast .qp-hatch-reversed path, body.vscode-high-contrast-light .qp-hatch-reversed path { opacity: 1; }
body.vscode-high-contrast .qp-grid, body.vscode-high-contrast-light .qp-grid { stroke: var(--vscode-contrastBorder, var(--qp-line)); stroke-dasharray: 2 4; }
body.vscode-high-contrast .qp-edge, body.vscode-high-contrast-light .qp-edge { stroke-width: 2.5; }
`;

/**
 * The output current against temperature (the drift sweep) as an SVG fragment, with the same
 * classes as the output characteristic; a note instead when fewer than two points came.
 */
export function renderDriftSvg(result: OutputCharacteristicResult, size: PlotSize): string {
  const width = Math.max(240, Number.isFinite(size.width) ? size.width : 0);
  const height = Math.max(160, Number.isFinite(size.height) ? size.height : 0);
  const device = escapeXml(result.device ?? '');
  const id = idOf(`drift#${result.structureId}#${result.device}`);
  const pts = (Array.isArray(result.drift) ? result.drift : []).filter((p) => Number.isFinite(p?.t) && Number.isFinite(p?.i)).sort((a, b) => a.t - b.t);
  if (pts.length < 2) {
    return `<svg xmlns="http://www.w3.org/2000/svg" class="qp-chart" viewBox="0 0 ${width} ${height}" width="${width}" height="${height}" role="img" tabindex="0"><title>Drift of ${device}</title><text class="qp-note" x="${n(width / 2)}" y="${n(height / 2)}" text-anchor="middle">No drift sweep came with this result.</text></svg>`;
  }
  const plot = { left: 72, top: 20, right: width - 24, bottom: height - 52 };
  const [x0, x1] = spanOf(minOf(pts.map((p) => p.t)), maxOf(pts.map((p) => p.t)), 1);
  const [y0, y1] = spanOf(minOf(pts.map((p) => p.i)), maxOf(pts.map((p) => p.i)), 1e-6);
  const x = buildAxis(x0, x1, Math.max(3, Math.min(10, Math.round((plot.right - plot.left) / 90))), '°C', 'Temperature', (f) => plot.left + f * (plot.right - plot.left));
  const y = buildAxis(y0, y1, Math.max(3, Math.min(6, Math.round((plot.bottom - plot.top) / 50))), 'A', 'Output current', (f) => plot.bottom - f * (plot.bottom - plot.top));
  const px = (t: number) => plot.left + ((t - x.min) / (x.max - x.min)) * (plot.right - plot.left);
  const py = (i: number) => plot.bottom - ((i - y.min) / (y.max - y.min)) * (plot.bottom - plot.top);
  const out: string[] = [];
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" class="qp-chart qp-drift" viewBox="0 0 ${width} ${height}" width="${width}" height="${height}" role="img" tabindex="0" aria-labelledby="${id}-title">`);
  out.push(`<title id="${id}-title">Output current of ${device} against temperature, ${escapeXml(formatQuantity(pts[0].t, '°C'))} to ${escapeXml(formatQuantity(pts[pts.length - 1].t, '°C'))}</title>`);
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

/**
 * The output's Monte Carlo histogram as an SVG fragment (the same classes as the other charts):
 * one bar per bin of the runs' currents, the linear prediction — a normal curve at the nominal
 * value with the linear σ, scaled to the runs and bin width — and the target window when there is
 * one. A note instead when no Monte Carlo figures came.
 */
export function renderHistogramSvg(result: OutputCharacteristicResult, size: PlotSize): string {
  const width = Math.max(240, Number.isFinite(size.width) ? size.width : 0);
  const height = Math.max(160, Number.isFinite(size.height) ? size.height : 0);
  const device = escapeXml(result.device ?? '');
  const id = idOf(`histogram#${result.structureId}#${result.device}`);
  const mc = result.monteCarlo;
  const bins = Array.isArray(mc?.histogram) ? mc.histogram.filter((c) => Number.isFinite(c) && c >= 0) : [];
  if (!mc || bins.length === 0 || bins.length !== mc.histogram.length || !(mc.converged > 0) || !Number.isFinite(mc.min) || !Number.isFinite(mc.max)) {
    return `<svg xmlns="http://www.w3.org/2000/svg" class="qp-chart qp-histogram" viewBox="0 0 ${width} ${height}" width="${width}" height="${height}" role="img" tabindex="0"><title>Monte Carlo histogram of ${device}</title><text class="qp-note" x="${n(width / 2)}" y="${n(height / 2)}" text-anchor="middle">No Monte Carlo runs for this output yet.</text></svg>`;
  }
  const plot = { left: 72, top: 20, right: width - 24, bottom: height - 52 };
  const binWidth = mc.max > mc.min ? (mc.max - mc.min) / bins.length : 0;
  const linear = Number.isFinite(mc.linearSigma) && mc.linearSigma > 0 && Number.isFinite(mc.nominal) ? { mean: mc.nominal, sigma: mc.linearSigma } : undefined;
  // The axis spans the runs and the linear ±3σ, so the two can be compared at a glance.
  let lo = mc.min;
  let hi = binWidth > 0 ? mc.max : mc.min;
  if (linear) {
    lo = Math.min(lo, linear.mean - 3 * linear.sigma);
    hi = Math.max(hi, linear.mean + 3 * linear.sigma);
  }
  const [x0, x1] = spanOf(lo, hi, Math.max(Math.abs(lo) * 1e-3, 1e-12));
  const top = Math.max(1, maxOf(bins));
  const x = buildAxis(x0, x1, Math.max(3, Math.min(8, Math.round((plot.right - plot.left) / 100))), 'A', 'Output current', (f) => plot.left + f * (plot.right - plot.left));
  const yTicks = niceTicks(0, top * 1.1, Math.max(3, Math.min(6, Math.round((plot.bottom - plot.top) / 50))));
  const px = (v: number) => plot.left + ((v - x.min) / (x.max - x.min)) * (plot.right - plot.left);
  const py = (c: number) => plot.bottom - (c / yTicks.max) * (plot.bottom - plot.top);
  const fmtA = (v: number) => escapeXml(formatQuantity(v, 'A'));
  const out: string[] = [];
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" class="qp-chart qp-histogram" viewBox="0 0 ${width} ${height}" width="${width}" height="${height}" role="img" tabindex="0" aria-labelledby="${id}-title ${id}-desc">`);
  out.push(`<title id="${id}-title">Monte Carlo histogram of the output current of ${device}: ${mc.converged} of ${mc.runs} runs</title>`);
  out.push(
    `<desc id="${id}-desc">Mean ${fmtA(mc.mean)}, σ ${fmtA(mc.sigma)}, from ${fmtA(mc.min)} to ${fmtA(mc.max)}` +
      (linear ? `; the linear prediction is ${fmtA(linear.mean)} with σ ${fmtA(linear.sigma)}` : '') +
      (mc.target ? `; target window ${fmtA(mc.target.low)} to ${fmtA(mc.target.high)}${mc.yield !== undefined ? `, ${+(mc.yield * 100).toPrecision(3)} % of runs inside` : ''}` : '') +
      `.</desc>`,
  );
  for (const t of x.ticks) out.push(`<line class="qp-grid" x1="${n(t.px)}" y1="${n(plot.top)}" x2="${n(t.px)}" y2="${n(plot.bottom)}"/>`);
  for (const v of yTicks.values) out.push(`<line class="qp-grid" x1="${n(plot.left)}" y1="${n(py(v))}" x2="${n(plot.right)}" y2="${n(py(v))}"/>`);
  out.push('<g class="qp-bars">');
  bins.forEach((c, k) => {
    if (c === 0) return;
    const a = px(mc.min + k * binWidth);
    const b = binWidth > 0 ? px(mc.min + (k + 1) * binWidth) : a + 4;
    out.push(`<rect class="qp-bar" x="${n(Math.min(a, b))}" y="${n(py(c))}" width="${n(Math.max(1, Math.abs(b - a)))}" height="${n(plot.bottom - py(c))}"><title>${c} runs from ${fmtA(mc.min + k * binWidth)} to ${fmtA(mc.min + (k + 1) * binWidth)}</title></rect>`);
  });
  out.push('</g>');
  if (linear && binWidth > 0) {
    // Expected runs per bin of a normal population: N·w·φ((x − μ)/σ)/σ.
    const pts: string[] = [];
    const steps = 120;
    for (let k = 0; k <= steps; k++) {
      const v = x.min + ((x.max - x.min) * k) / steps;
      const z = (v - linear.mean) / linear.sigma;
      const c = (mc.converged * binWidth * Math.exp(-0.5 * z * z)) / (linear.sigma * Math.sqrt(2 * Math.PI));
      pts.push(`${n(px(v))},${n(py(Math.min(c, yTicks.max)))}`);
    }
    out.push(`<polyline class="qp-predicted" points="${pts.join(' ')}"/>`);
    out.push(`<line class="qp-nominal" x1="${n(px(linear.mean))}" y1="${n(plot.top)}" x2="${n(px(linear.mean))}" y2="${n(plot.bottom)}"/>`);
    out.push(`<text class="qp-predicted-label" x="${n(Math.min(plot.right - 4, px(linear.mean) + 6))}" y="${n(plot.top + 14)}" text-anchor="${px(linear.mean) > (plot.left + plot.right) / 2 ? 'end' : 'start'}">linear prediction (dashed), nominal</text>`);
  }
  if (mc.target) {
    for (const [v, label] of [[mc.target.low, 'target low'], [mc.target.high, 'target high']] as const) {
      if (!(v >= x.min && v <= x.max)) continue;
      out.push(`<line class="qp-window" x1="${n(px(v))}" y1="${n(plot.top)}" x2="${n(px(v))}" y2="${n(plot.bottom)}"/>`);
      out.push(`<text class="qp-window-label" x="${n(px(v) + (label === 'target low' ? 4 : -4))}" y="${n(plot.bottom - 8)}" text-anchor="${label === 'target low' ? 'start' : 'end'}">${label}</text>`);
    }
  }
  out.push(`<rect class="qp-frame" x="${n(plot.left)}" y="${n(plot.top)}" width="${n(plot.right - plot.left)}" height="${n(plot.bottom - plot.top)}"/>`);
  out.push('<g class="qp-axis qp-axis-x">');
  for (const t of x.ticks) out.push(`<text class="qp-tick-label" data-value="${t.value}" x="${n(t.px)}" y="${n(plot.bottom + 18)}" text-anchor="middle">${escapeXml(t.label)}</text>`);
  out.push(`<text class="qp-axis-title" x="${n((plot.left + plot.right) / 2)}" y="${n(height - 12)}" text-anchor="middle">${escapeXml(x.title)}</text>`);
  out.push('</g>');
  out.push('<g class="qp-axis qp-axis-y">');
  for (const v of yTicks.values) out.push(`<text class="qp-tick-label" data-value="${v}" x="${n(plot.left - 8)}" y="${n(py(v) + 4)}" text-anchor="end">${v}</text>`);
  const yMid = (plot.top + plot.bottom) / 2;
  out.push(`<text class="qp-axis-title" x="16" y="${n(yMid)}" text-anchor="middle" transform="rotate(-90 16 ${n(yMid)})">Runs per bin</text>`);
  out.push('</g>');
  out.push('</svg>');
  return out.join('\n');
}

/** The Monte Carlo figures of an output in one sentence beside the linear ones, or how to get them. */
export function monteCarloSentence(result: OutputCharacteristicResult): string {
  const mc = result.monteCarlo;
  if (!mc || !(mc.converged > 0)) return 'No Monte Carlo runs for this output yet: run “qpoint: Run Monte Carlo on this netlist” (or qpoint report --monte-carlo N) and its histogram appears here.';
  const pct = (r: number) => `${+(Math.abs(r) * 100).toPrecision(3)} %`;
  const rel = (s: number) => (mc.nominal > 0 ? ` (${pct(s / mc.nominal)})` : '');
  return (
    `${mc.converged} of ${mc.runs} Monte Carlo runs: mean ${formatQuantity(mc.mean, 'A')}, σ ${formatQuantity(mc.sigma, 'A')}${rel(mc.sigma)}, from ${formatQuantity(mc.min, 'A')} to ${formatQuantity(mc.max, 'A')}; ` +
    `the linear prediction is σ ${formatQuantity(mc.linearSigma, 'A')}${rel(mc.linearSigma)} about ${formatQuantity(mc.nominal, 'A')}` +
    (mc.target ? `; ${mc.yield !== undefined ? `${pct(mc.yield)} of the runs` : 'runs'} inside the target window${mc.predictedYield !== undefined ? ` (predicted ${pct(mc.predictedYield)})` : ''}` : '') +
    '.'
  );
}

// The review formats of `qpoint report`: one self-contained HTML page with the output characteristics, and Markdown for a CI job summary.

import { technologyWords } from '../../shared-analysis/src/structures/technology';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { recordIsOff } from '../../shared-analysis/src/checks/devices/context';
import { outputCharacteristic } from '../../shared-analysis/src/features/sweep';
import { capitalised, kindName, outputKindName } from '../../shared-analysis/src/structures/catalogue';
import type { Structure } from '../../shared-analysis/src/structures/types';
import { formatDifference, formatHeadroom, formatQuantity, formatRange } from '../../shared-analysis/src/view/format';
import { OUTPUT_CHARACTERISTIC_CSS, escapeXml, monteCarloSentence, renderCornerTableHtml, renderDriftSvg, renderHistogramSvg, renderOutputCharacteristicSvg } from '../../shared-analysis/src/view/plot';
import { minOf, maxOf } from '../../shared-analysis/src/arrays';

/** A finding as the command line reports it (the JSON output's diagnostic). */
export interface ReportDiagnostic {
  code: string;
  severity: string;
  message: string;
  range: { start: { line: number; character: number } };
  /** Set when the finding lies in an included file. */
  path?: string;
  fixes?: { title: string; preferred?: boolean }[];
}

/** One checked file: its analysis when it was read, and its findings. */
export interface ReportFile {
  path: string;
  analysis?: Analysis;
  diagnostics: ReportDiagnostic[];
}

/** One row of the structures table: a reference branch or an output. */
export interface StructureRow {
  structure: string;
  device: string;
  role: string;
  estimate: string;
  solved: string;
  difference: string;
  headroom: string;
  region: string;
  /**
   * Spread and drift of the row's current: the corner range today. The variation figures
   * (σ from tolerances, worst case, ppm/°C, %/V) join this cell, so both formats keep one column for them.
   */
  spread: string;
}

/**
 * Output characteristics drawn per file unless `--charts-per-file` says otherwise: each costs a few
 * dozen solves, and a page of hundreds of charts buries the few a reviewer must see. The charts
 * drawn are the outputs with the least headroom; the page names the ones left out and how to draw them.
 */
export const MAX_PLOTS_PER_FILE = 24;

/** An output of a file's structures with the least headroom it has at the nominal point and at any converged corner. */
export interface RankedOutput {
  device: string;
  /** Volts beyond the edge of the active region (negative: out of it); NaN when there is no figure. */
  worstHeadroom: number;
}

/**
 * Every mirror output of the analysis, least headroom first (nominal or at any converged corner,
 * whichever is less), so the outputs nearest to or past the edge of their active region come first;
 * outputs without a headroom figure last, and ties in the netlist's order.
 */
export function outputsWorstFirst(a: Analysis): RankedOutput[] {
  const ranked: RankedOutput[] = [];
  for (const s of a.structures) {
    for (const o of s.outputs) {
      let worst = s.headroom[o.device];
      if (worst === undefined || !Number.isFinite(worst)) worst = NaN;
      for (const c of s.corners) {
        const h = c.converged ? c.headroom[o.device] : undefined;
        if (h !== undefined && Number.isFinite(h) && !(h >= worst)) worst = h;
      }
      ranked.push({ device: o.device, worstHeadroom: worst });
    }
  }
  const key = (r: RankedOutput) => (Number.isNaN(r.worstHeadroom) ? Infinity : r.worstHeadroom);
  // Array.prototype.sort is stable (ECMA-262 since 2019), so equal keys keep the netlist's order.
  return ranked.sort((x, y) => (key(x) === key(y) ? 0 : key(x) < key(y) ? -1 : 1));
}

/** The structures table of one analysis, in words and SI units. */
export function structureRows(a: Analysis): StructureRow[] {
  const rows: StructureRow[] = [];
  const op = a.operatingPoint;
  for (const s of a.structures) {
    const name = `${capitalised(kindName(s.kind))} (${technologyWords(s.technology)}${s.instance ? `, in ${s.instance.replace(/\.$/, '')}` : ''})`;
    const region = (device: string) => {
      const rec = op?.devices[device];
      return rec && 'region' in rec ? (recordIsOff(rec) ? 'off' : rec.region) : '';
    };
    const irefs = s.corners.filter((c) => c.converged && Number.isFinite(c.iref)).map((c) => c.iref);
    rows.push({
      structure: name,
      device: s.reference.device,
      role: 'reference',
      estimate: s.estimate ? formatQuantity(s.estimate.iref, 'A') : '',
      solved: s.solved ? formatQuantity(s.solved.iref, 'A') : '',
      difference: s.estimate && s.solved ? formatDifference(s.estimate.iref, s.solved.iref) : '',
      headroom: '',
      region: region(s.reference.device),
      spread: irefs.length ? `${formatRange(minOf(irefs), maxOf(irefs), 'A')} (${irefs.length} corners)` : '',
    });
    for (const o of s.outputs) {
      const e = s.estimate?.iout[o.device];
      const v = s.solved?.iout[o.device];
      const h = s.headroom[o.device];
      const corners = s.corners.filter((c) => c.converged && Number.isFinite(c.iout[o.device]));
      const outside = corners.filter((c) => c.outOfRegion.includes(o.device)).length;
      const vals = corners.map((c) => c.iout[o.device]);
      rows.push({
        structure: name,
        device: o.device,
        role: outputKindName(s, o.device),
        estimate: e !== undefined ? formatQuantity(e, 'A') : '',
        solved: v !== undefined ? formatQuantity(v, 'A') : '',
        difference: e !== undefined && v !== undefined ? formatDifference(e, v) : '',
        headroom: h !== undefined && Number.isFinite(h) ? formatHeadroom(h, s.technology) : '',
        region: region(o.device),
        spread: vals.length ? `${formatRange(minOf(vals), maxOf(vals), 'A')} (${vals.length} corners${outside ? `, out of region at ${outside}` : ''})` : '',
      });
    }
  }
  return rows;
}

const HEADERS: [keyof StructureRow, string][] = [
  ['structure', 'Structure'],
  ['device', 'Device'],
  ['role', 'Role'],
  ['estimate', 'Estimate'],
  ['solved', 'Solved'],
  ['difference', 'Solved against estimate'],
  ['headroom', 'Headroom'],
  ['region', 'Region'],
  ['spread', 'Spread and drift'],
];

function location(f: ReportFile, d: ReportDiagnostic): string {
  return `${d.path ?? f.path}:${d.range.start.line + 1}:${d.range.start.character + 1}`;
}

function discrepancies(structures: Structure[]): string[] {
  return structures.filter((s) => s.discrepancy).map((s) => `${capitalised(kindName(s.kind))} on ${s.reference.device}: ${s.discrepancy}`);
}

const REPORT_CSS = `
body { max-width: 1200px; margin: 0 auto; line-height: 1.45; }
header { border-bottom: 1px solid var(--qp-line); margin-bottom: 16px; }
h2 { font-size: 1.1em; margin: 24px 0 6px; }
h3 { font-size: 1em; margin: 18px 0 6px; }
.qp-caution { border-left: 4px solid var(--qp-edge); padding: 6px 10px; }
table.qp-structures, table.qp-findings { border-collapse: collapse; width: 100%; font-size: 0.92em; }
.qp-structures th, .qp-structures td, .qp-findings th, .qp-findings td { border: 1px solid var(--qp-line); padding: 3px 8px; text-align: left; vertical-align: top; }
.qp-structures td { font-variant-numeric: tabular-nums; }
.qp-sev-error { font-weight: 600; color: var(--qp-edge); }
.qp-sev-warning { font-weight: 600; }
.qp-fixes { margin: 2px 0 0 1em; padding: 0; }
figure { margin: 16px 0; }
figcaption { color: var(--qp-muted); margin-bottom: 4px; }
code { font-family: ui-monospace, monospace; }
`;

/** How a file's section is drawn. */
export interface SectionOptions {
  /** Output characteristics drawn at most (least headroom first); Infinity draws every one. */
  maxCharts?: number;
  /** The command that draws them all, named when some are left out. */
  allChartsHint?: string;
}

/**
 * One file's section of the HTML page: the operating point, the structures table (estimate, solved,
 * headroom, spread and drift), the findings with their fixes, and the output characteristics, least
 * headroom first, at most `maxCharts` of them with a line naming those left out. `index` numbers the
 * file in the run (for its heading's anchor).
 */
export function htmlSection(f: ReportFile, index: number, options: SectionOptions = {}): string {
  const maxCharts = options.maxCharts ?? MAX_PLOTS_PER_FILE;
  const body: string[] = [];
  const a = f.analysis;
  body.push(`<section aria-labelledby="file-${index}">`);
  body.push(`<h2 id="file-${index}"><code>${escapeXml(f.path)}</code>${a?.circuit?.title ? ` — ${escapeXml(a.circuit.title)}` : ''}</h2>`);
  const op = a?.operatingPoint;
  if (op) body.push(`<p>Operating point at ${escapeXml(formatQuantity(op.temperatureC, ''))} °C: ${op.converged ? 'converged' : '<strong>did not converge</strong>'} in ${op.iterations} Newton iterations${op.fallbacks.length ? ` (${escapeXml(op.fallbacks.join(', '))})` : ''}.</p>`);
  else if (a) body.push('<p>Operating point: not solved.</p>');
  const rows = a ? structureRows(a) : [];
  body.push('<h3>Structures</h3>');
  if (rows.length === 0) body.push('<p>No mirrors or reference branches recognised.</p>');
  else {
    body.push('<table class="qp-structures"><thead><tr>' + HEADERS.map(([, h]) => `<th scope="col">${h}</th>`).join('') + '</tr></thead><tbody>');
    for (const r of rows) body.push('<tr>' + HEADERS.map(([k]) => `<td>${escapeXml(r[k])}</td>`).join('') + '</tr>');
    body.push('</tbody></table>');
    const why = a ? discrepancies(a.structures) : [];
    if (why.length) body.push('<ul>' + why.map((w) => `<li>${escapeXml(w)}</li>`).join('') + '</ul>');
  }
  body.push(`<h3>Findings (${f.diagnostics.length})</h3>`);
  if (f.diagnostics.length === 0) body.push('<p>None.</p>');
  else {
    body.push('<table class="qp-findings"><thead><tr><th scope="col">Severity</th><th scope="col">Code</th><th scope="col">Where</th><th scope="col">Finding and fixes</th></tr></thead><tbody>');
    for (const d of f.diagnostics) {
      const fixes = d.fixes?.length ? `<ul class="qp-fixes">${d.fixes.map((x) => `<li>fix${x.preferred ? ' (preferred)' : ''}: ${escapeXml(x.title)}</li>`).join('')}</ul>` : '';
      body.push(`<tr><td class="qp-sev-${escapeXml(d.severity)}">${escapeXml(d.severity)}</td><td><code>${escapeXml(d.code)}</code></td><td><code>${escapeXml(location(f, d))}</code></td><td>${escapeXml(d.message)}${fixes}</td></tr>`);
    }
    body.push('</tbody></table>');
  }
  const outputs = a ? outputsWorstFirst(a) : [];
  if (a && outputs.length) {
    const drawn = outputs.slice(0, maxCharts);
    const left = outputs.slice(drawn.length);
    body.push(`<h3>Output characteristics${outputs.length > 1 ? ', least headroom first' : ''}</h3>`);
    for (const { device } of drawn) {
      const r = outputCharacteristic(a, device, 61);
      if ('error' in r) {
        body.push(`<p class="qp-note">${escapeXml(device)}: ${escapeXml(r.error)}</p>`);
        continue;
      }
      body.push(`<figure><figcaption>${escapeXml(r.title)}, swept from ${escapeXml(formatQuantity(r.range.low, 'V'))} to ${escapeXml(formatQuantity(r.range.high, 'V'))} at node ${escapeXml(r.node)} with its load removed; hatched: out of its active region${r.activeSide === 'below' ? ' (right of the edge)' : ' (left of the edge)'}.</figcaption>`);
      body.push(renderOutputCharacteristicSvg(r, { width: 720, height: 380 }));
      // The corner table folds away: thirty rows per chart would bury the page (the summary says the range).
      if (r.cornerSpread.length) body.push(`<details><summary>Output current at each of the ${r.cornerSpread.length} corners</summary>\n${renderCornerTableHtml(r)}\n</details>`);
      body.push('</figure>');
      // The same drift and Monte Carlo figures as the editor's panel and the JSON (`variation` per output).
      if (r.drift && r.drift.length >= 2) body.push(`<figure><figcaption>Output current of ${escapeXml(device)} against temperature, its load in place.</figcaption>\n${renderDriftSvg(r, { width: 720, height: 260 })}</figure>`);
      if (r.monteCarlo) body.push(`<figure><figcaption>${escapeXml(monteCarloSentence(r))}</figcaption>\n${renderHistogramSvg(r, { width: 720, height: 260 })}</figure>`);
    }
    if (left.length) {
      const how = options.allChartsHint ?? 'qpoint report --format html --charts-per-file all';
      body.push(
        `<p class="qp-note qp-charts-left-out"><strong>${left.length} more output${left.length === 1 ? ' is' : 's are'} not drawn</strong> ` +
          `(at most ${drawn.length} per file, least headroom first, so ${left.length === 1 ? 'it has' : 'these have'} the most): ` +
          `draw every one with <code>${escapeXml(how)}</code>, or one with <code>qpoint sweep FILE --output DEVICE</code>. ` +
          `${left.length === 1 ? 'Its' : 'Their'} figures are in the structures table above.</p>`,
      );
      body.push(`<details><summary>Outputs not drawn (${left.length})</summary><p>${left.map((o) => `<code>${escapeXml(o.device)}</code>`).join(', ')}</p></details>`);
    }
  }
  body.push('</section>');
  return body.join('\n');
}

/** The HTML page around the files' sections (from `htmlSection`, in the files' order). */
export function htmlPage(paths: string[], sections: string[], caution: string, generator: string): string {
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="${escapeXml(generator)}">
<title>qpoint bias report</title>
<style>${OUTPUT_CHARACTERISTIC_CSS}${REPORT_CSS}</style>
</head>
<body>
<main>
<header><h1>qpoint bias report</h1>
<p>${paths.length} netlist${paths.length === 1 ? '' : 's'}: ${paths.map((p) => `<code>${escapeXml(p)}</code>`).join(', ')}</p>
<p class="qp-caution">${escapeXml(caution)}</p></header>
${sections.join('\n')}
</main>
</body>
</html>
`;
}

/**
 * One self-contained HTML page for reviewers: per file the operating point, a structures table
 * (estimate, solved, headroom, spread and drift), the findings with their fixes, and the
 * output-characteristic charts (`htmlSection`). No script, no outside resource; the colours
 * follow the reader's light or dark preference.
 */
export function htmlReport(files: ReportFile[], caution: string, generator: string, options: SectionOptions = {}): string {
  return htmlPage(
    files.map((f) => f.path),
    files.map((f, i) => htmlSection(f, i, options)),
    caution,
    generator,
  );
}

/** Text for a Markdown table cell: pipes and line breaks escaped, so a netlist's text cannot break the table. */
function cell(text: string): string {
  return text.replace(/\\/g, '\\\\').replace(/\|/g, '\\|').replace(/\r?\n/g, ' ').replace(/[<>]/g, (c) => (c === '<' ? '&lt;' : '&gt;'));
}

/**
 * Markdown for a CI job summary (for example appended to `$GITHUB_STEP_SUMMARY`): per file the
 * counts of findings by severity, the structures table and the findings table with their fixes.
 */
export function markdownReport(files: ReportFile[], caution: string): string {
  return markdownPage(files.map(markdownSection), caution);
}

/** The Markdown summary around the files' sections (from `markdownSection`, in the files' order). */
export function markdownPage(sections: string[], caution: string): string {
  return ['## qpoint bias report', '', ...sections, `> ${caution}`, ''].join('\n');
}

/** One file's part of the Markdown summary. */
export function markdownSection(f: ReportFile): string {
  const out: string[] = [];
  const a = f.analysis;
  const counts = ['error', 'warning', 'info', 'hint'].map((s) => [s, f.diagnostics.filter((d) => d.severity === s).length] as const).filter(([, n]) => n > 0);
  out.push(`### \`${f.path.replace(/`/g, "'")}\`${a?.circuit?.title ? ` — ${cell(a.circuit.title)}` : ''}`, '');
  out.push(counts.length ? `Findings: ${counts.map(([s, n]) => `${n} ${s}${n === 1 ? '' : 's'}`).join(', ')}.` : 'Findings: none.', '');
  const rows = a ? structureRows(a) : [];
  if (rows.length) {
    out.push('| ' + HEADERS.map(([, h]) => h).join(' | ') + ' |');
    out.push('|' + HEADERS.map(() => '---').join('|') + '|');
    for (const r of rows) out.push('| ' + HEADERS.map(([k]) => cell(r[k])).join(' | ') + ' |');
    out.push('');
  } else if (a) out.push('No mirrors or reference branches recognised.', '');
  if (f.diagnostics.length) {
    out.push('| Severity | Code | Where | Finding |', '|---|---|---|---|');
    for (const d of f.diagnostics) {
      const fixes = d.fixes?.length ? `<br>${d.fixes.map((x) => `fix${x.preferred ? ' (preferred)' : ''}: ${cell(x.title)}`).join('<br>')}` : '';
      out.push(`| ${d.severity} | \`${d.code}\` | \`${cell(location(f, d)).replace(/`/g, "'")}\` | ${cell(d.message)}${fixes} |`);
    }
    out.push('');
  }
  return out.join('\n');
}

// The variation figures in words, one compact line per output, shared by the hover and the text report.

import type { Analysis } from '../analysis';
import { maxOf } from '../arrays';
import { formatEngineering } from '../fixes/format';
import { formatTempco } from '../view/format';
import type { OutputVariation } from './types';
import { rankOf } from './rank';

/** A percentage without a sign, at most three figures: `2.82 %`, `0.004 %`. */
export function percentText(ratio: number): string {
  if (!Number.isFinite(ratio)) return '—';
  const p = Math.abs(ratio * 100);
  if (p === 0) return '0 %';
  if (p < 0.001) return '< 0.001 %';
  return `${+p.toPrecision(3)} %`;
}

/** A signed figure, or — when there is none (a value the output guard left out as not finite). */
function signed(v: number, digits = 3): string {
  if (!Number.isFinite(v)) return '—';
  const t = +Math.abs(v).toPrecision(digits);
  return `${v < 0 ? '−' : '+'}${t}`;
}

/** `σ 2.82 % (±3σ 8.46 %), worst case ±18.7 %; drift +115 ppm/°C; VCC +9.48 %/V; from VCC 45 %, Q1/Q2 VBE 34 %, RREF 18 %` (and the yield when the output has a target). */
export function spreadText(v: OutputVariation): string {
  const parts = [`σ ${percentText(v.sigmaRelative)} (±3σ ${percentText(3 * v.sigmaRelative)}), worst case ±${percentText(v.worstCaseRelative)}`];
  parts.push(Number.isFinite(v.tempcoPpmPerC) ? `drift ${formatTempco(v.tempcoPpmPerC)}` : 'drift —');
  const supplies = Object.entries(v.supplyPercentPerVolt)
    .filter(([, s]) => Math.abs(s) >= 0.01)
    .sort((a, b) => rankOf(b[1]) - rankOf(a[1]))
    .slice(0, 3)
    .map(([name, s]) => `${name} ${signed(s)} %/V`);
  if (supplies.length) parts.push(supplies.join(', '));
  const top = v.contributors.filter((c) => c.share >= 0.005).slice(0, 3);
  if (top.length) parts.push(`from ${top.map((c) => `${c.name} ${Math.round(c.share * 100)} %`).join(', ')}`);
  if (v.target) parts.push(`predicted yield ${percentText(v.target.yield)} within ${formatEngineering(v.target.current, { unit: 'A', digits: 3 })} ±${percentText(v.target.tolerance)}`);
  return parts.join('; ');
}

/** The variation of the output an element carries: its structure output current, else its target current, else the IREF of the structure it references. */
export function variationOfElement(analysis: Analysis, name: string): OutputVariation | undefined {
  const list = analysis.variation?.outputs;
  if (!list) return undefined;
  const mine = outputsByElement(list).get(name.toLowerCase()) ?? [];
  return mine.find((o) => o.key.includes(' out ')) ?? mine.find((o) => o.key.startsWith('element ')) ?? mine.find((o) => o.key.endsWith(' iref'));
}

/** Per list of outputs, its outputs by lower-case element name, in list order, with the list's length when it was built. */
const byElement = new WeakMap<readonly OutputVariation[], { length: number; table: Map<string, OutputVariation[]> }>();

/**
 * The outputs of `list` by lower-case element name, built once per list (a hover on a large circuit read
 * every output of the list, about ten thousand on the 20k sink array); built again if the list grew.
 */
function outputsByElement(list: readonly OutputVariation[]): Map<string, OutputVariation[]> {
  const cached = byElement.get(list);
  if (cached && cached.length === list.length) return cached.table;
  const table = new Map<string, OutputVariation[]>();
  for (const o of list) {
    if (o.element === undefined) continue;
    const key = o.element.toLowerCase();
    const mine = table.get(key);
    if (mine) mine.push(o);
    else table.set(key, [o]);
  }
  byElement.set(list, { length: list.length, table });
  return table;
}

const BARS = '▁▂▃▄▅▆▇█';

/** A Monte Carlo histogram as one line of block characters, with its range: `▁▂▅█▆▃▁ 431 µA … 529 µA`. */
export function histogramText(v: OutputVariation): string | undefined {
  const mc = v.monteCarlo;
  if (!mc || mc.converged < 2) return undefined;
  const top = Math.max(1, maxOf(mc.histogram));
  const bars = mc.histogram.map((c) => (c === 0 ? ' ' : BARS[Math.min(BARS.length - 1, Math.floor((c / top) * (BARS.length - 1) + 0.5))])).join('');
  const unit = v.unit;
  const y = mc.yield !== undefined ? `; ${percentText(mc.yield)} of runs within the target` : '';
  return `Monte Carlo, ${mc.converged} runs: mean ${formatEngineering(mc.mean, { unit, digits: 4 })}, σ ${percentText(mc.sigma / Math.abs(v.nominal || 1))}${y}; ${formatEngineering(mc.min, { unit, digits: 3 })} ${bars} ${formatEngineering(mc.max, { unit, digits: 3 })}`;
}

// The words every host uses for a structure's outputs and the voltages it produces: hover, inlay hints and the command line's report.

import { polaritySign } from '../structures/technology';
import { outputKindName } from '../structures/catalogue';
import type { DerivedVoltage, Structure, StructureOutput } from '../structures/types';
import { maxOf, minOf } from '../arrays';
import { formatNumber, formatQuantity, formatRange, formatTempco } from '../view/format';

/** Where a derived voltage is measured: "on vbg" or "on vbg above e1" (below for PNP, PMOS and P-channel JFET structures). */
function placeOf(s: Pick<Structure, 'technology'>, v: DerivedVoltage): string {
  if (v.from === undefined || v.from === '0') return `on ${v.node}`;
  const below = polaritySign(s.technology) < 0;
  return `on ${v.node}, ${below ? 'below' : 'above'} ${v.from}`;
}


/**
 * One sentence per voltage the structure produces: what it is, where, by hand and solved, its
 * spread across the corners and its drift (from the cold and hot corners, and by hand where the
 * kind derives one). Empty when the structure produces none.
 */
export function derivedVoltageLines(s: Structure): string[] {
  return (s.voltages ?? []).map((v) => {
    const values: string[] = [];
    if (v.estimate !== undefined) values.push(`hand estimate ${formatQuantity(v.estimate, 'V')}`);
    if (v.solved !== undefined) values.push(`solved ${formatQuantity(v.solved, 'V')}`);
    const extra: string[] = [];
    if (v.cornerRange && v.cornerRange.max > v.cornerRange.min) extra.push(`${formatQuantity(v.cornerRange.min, 'V')} to ${formatQuantity(v.cornerRange.max, 'V')} across the corners`);
    const drift: string[] = [];
    if (v.tempcoPpmPerC !== undefined && Number.isFinite(v.tempcoPpmPerC)) drift.push(`${formatTempco(v.tempcoPpmPerC)} from the cold and hot corners`);
    if (v.tempcoByHandPpmPerC !== undefined && Number.isFinite(v.tempcoByHandPpmPerC)) drift.push(`${formatTempco(v.tempcoByHandPpmPerC)} by hand`);
    if (drift.length) extra.push(`drift ${drift.join(', ')}`);
    return `${v.name} (${v.description}) ${placeOf(s, v)}: ${values.length ? values.join(', ') : 'not solved'}${extra.length ? `; ${extra.join('; ')}` : ''}`;
  });
}

/** A short label of the voltages a structure produces ("VBG 1.22 V"), solved where it was, else by hand; undefined when none. */
export function derivedVoltageLabel(s: Structure): string | undefined {
  const parts = (s.voltages ?? [])
    .map((v) => {
      const x = v.solved ?? v.estimate;
      return x === undefined ? undefined : `${v.name} ${formatQuantity(x, 'V')}`;
    })
    .filter((x): x is string => x !== undefined);
  return parts.length ? parts.join(' · ') : undefined;
}

/**
 * What an output is, in words: its kind's output name ("Widlar output", "cascode output"), with
 * the intended ratio only where there is one ("1:2 simple-mirror output").
 */
export function outputWords(s: Pick<Structure, 'kind' | 'outputs'>, o: StructureOutput): string {
  const name = outputKindName(s, o.device);
  return Math.abs(o.ratio - 1) > 1e-9 ? `${name}, intended ratio 1:${formatNumber(o.ratio)}` : name;
}

/** Corner labels in running text: at most four, then how many more. */
function listed(labels: string[], max = 4): string {
  return labels.length <= max ? labels.join('; ') : `${labels.slice(0, max).join('; ')}; and ${labels.length - max} more`;
}

/**
 * What the start-up check found for a self-biased loop, in one sentence: that it can rest at zero
 * current (at nominal or at which corners) and the state the solver chose, or the start-up path that
 * excludes the dead state, then how many corners were checked and what an all-off start reaches at the
 * hardest of them. Undefined for a structure that is not part of such a loop.
 */
export function startupLine(s: Structure): string | undefined {
  const r = s.startup;
  if (!r) return undefined;
  const chosen = r.solvedCurrent !== undefined ? `; the solver settled at ${formatQuantity(r.solvedCurrent, 'A')} in ${s.reference.device}` : '';
  if (r.zeroStateNominal) {
    const on = (r.corners ?? []).filter((c) => c.zeroState && c.converged && c.solvedCurrent !== undefined).map((c) => c.solvedCurrent!);
    const range = on.length ? `, where the corner solves settled at IREF ${formatRange(minOf(on), maxOf(on), 'A')}` : '';
    return `Start-up: the loop can rest at zero current at power-up${r.zeroStateCorners.length ? ` (also at ${r.zeroStateCorners.length} of the ${r.corners?.length ?? r.zeroStateCorners.length} corners${range})` : ''}; no start-up path${chosen}.`;
  }
  const path = r.startupPath
    ? `${r.startupPath.elements.join(', ')} ${r.startupPath.elements.length > 1 ? 'drive' : 'drives'} ${r.startupPath.node} to ${formatQuantity(r.startupPath.volts, 'V')} with the loop off, which turns on ${r.startupPath.turnsOn}`
    : 'the rest of the circuit turns the loop on';
  const a = r.allOffStart?.solved;
  const climbs = a
    ? a.converged
      ? `; solved from an all-off start it reaches ${formatQuantity(a.current, 'A')} in ${s.reference.device}`
      : '; solved from an all-off start it did not converge'
    : '';
  const corners = r.zeroStateCorners.length ? `, except at ${listed(r.zeroStateCorners)}, where it can rest at zero current` : '';
  const checked = r.corners?.length ? ` Checked at ${r.corners.length} corners` : '';
  const c = r.allOffStartCorner;
  const hardest = c
    ? c.solved.converged
      ? `${checked ? '; at' : ' At'} the hardest (${c.label}) an all-off start reaches IREF ${formatQuantity(c.solved.current, 'A')}.`
      : `${checked ? '; at' : ' At'} the hardest (${c.label}) the solve from an all-off start did not converge.`
    : checked ? '.' : '';
  return `Start-up: ${path}, so the loop cannot stay off at power-up${corners}${climbs}${chosen}.${checked}${hardest}`;
}

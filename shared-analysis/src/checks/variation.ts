// Yield against targets: the predicted fraction of builds whose current stays inside an `expect` window, a finding when it is too low, and what would raise it (docs/VARIATION.md).

import type { Circuit } from '../circuit';
import type { Target } from './targets';
import { targetElements, targetIndexOf } from './targets';
import type { Structure } from '../structures/types';
import type { Finding, Fix, Severity } from '../types';
import type { ParsedDocument } from '../syntax/ast';
import { toleranceNoteEdit, tolerancePercentText } from '../fixes/tolerance-note';
import { formatEngineering, formatPercent } from '../fixes/format';
import { fractionWithin, sourceRowOf, spreadOf, type VariationDetail } from '../variation/index';

/** Finding codes this module owns, with their default severity and a one-line summary for the README. */
export const VARIATION_CODES: Record<string, { severity: Severity; summary: string }> = {
  'target-yield-low': {
    severity: 'warning',
    summary: 'An element meets its target at nominal, but the tolerances and mismatch leave too few builds inside the window (predicted yield below the setting, 99.7 % by default); the message names the largest contributor and what would fix it; a tighter resistor or supply tolerance is also a code action that writes it on the card, titled with the yield it gives. A warning when the target writes its tolerance, information when the window is the default one (the resistor series\' tolerance).',
  },
};

/** Tighter resistor tolerances a fix may propose, loosest first (IEC 60063 series tolerances, then the usual precision grades; common practice). */
const TIGHTER_RESISTORS = [0.05, 0.02, 0.01, 0.005, 0.0025, 0.001];
/** Tighter supply tolerances a fix may propose (common practice). */
const TIGHTER_SUPPLIES = [0.02, 0.01, 0.005, 0.002, 0.001];
/** Area factors a mismatch fix may propose: mismatch σ falls as 1/√area (Pelgrom). */
const AREA_FACTORS = [2, 4, 8, 16, 32];

const pct = (r: number): string => formatPercent(r, 3).replace(/^\+/, '');
const plain = (r: number): string => `${+(r * 100).toPrecision(3)} %`;

/**
 * A `target-yield-low` finding for every target element whose predicted yield falls below
 * `yieldTarget`. A target without its own tolerance is held to the window the target check holds
 * it to (the resistor series' tolerance), so it gets the same finding, as information: the window
 * is a default, not a figure the designer wrote (as `target-missed-at-corner` does for a corner
 * tolerance). Targets already missed at nominal are left to `target-missed`.
 */
export function checkYield(circuit: Circuit, structures: Structure[], targets: Target[], detail: VariationDetail, yieldTarget: number, documents: Record<string, ParsedDocument>): Finding[] {
  const out: Finding[] = [];
  // The index costs a pass over every element and structure: a netlist without targets skips it (as checkTargets does).
  if (targets.length === 0) return out;
  const index = targetIndexOf(circuit, structures);
  const specIndex = new Map<string, number>();
  detail.specs.forEach((s, o) => {
    if (s.role === 'element' || s.role === 'iout') if (s.element && !specIndex.has(s.element)) specIndex.set(s.element, o);
  });
  for (const t of targets) {
    const own = t.tolerance !== undefined;
    for (const el of targetElements(circuit, t, index)) {
      const o = specIndex.get(el.name);
      if (o === undefined) continue;
      const v = detail.result.outputs[o];
      if (!v.target) continue;
      const nominal = Math.abs(v.nominal);
      const { current, tolerance, yield: y } = v.target;
      const lo = current * (1 - tolerance);
      const hi = current * (1 + tolerance);
      if (nominal < lo || nominal > hi) continue; // missed at nominal: target-missed says so
      if (y >= yieldTarget) continue;
      const top = v.contributors[0];
      const topGroup = top ? groupOf(detail, o, top.name) : undefined;
      const fix = topGroup ? fixFor(detail, o, topGroup, lo, hi, yieldTarget, circuit, documents) : undefined;
      const message =
        `Predicted yield of ${el.name} against ${formatEngineering(current, { unit: 'A', digits: 3 })} ±${plain(tolerance)}${own ? '' : ' (the default window: the target writes no tolerance, so it takes the resistor series\' tolerance)'} is ${pct(y)}, below ${pct(yieldTarget)}: ` +
        `σ ${plain(v.sigmaRelative)} (±3σ ${plain(3 * v.sigmaRelative)}), worst case ±${plain(v.worstCaseRelative)}` +
        (top ? `; the largest contributor is ${top.name} (${plain(top.share)} of the variance).` : '.') +
        (fix ? ` ${fix.text}` : top ? ` No single change to ${top.name} brings the yield to ${pct(yieldTarget)}: widen the window or reduce the other contributors too.` : '') +
        centring(nominal, current, v.sigma, lo, hi, y);
      out.push({
        code: 'target-yield-low',
        severity: own ? VARIATION_CODES['target-yield-low'].severity : 'info',
        message,
        uri: t.uri,
        span: t.span,
        data: {
          element: el.name,
          yield: y,
          yieldTarget,
          tolerance,
          windowFrom: own ? 'target' : 'default',
          sigmaRelative: v.sigmaRelative,
          worstCaseRelative: v.worstCaseRelative,
          contributors: v.contributors.slice(0, 3),
          ...(fix ? { remedy: fix.data } : {}),
        },
        ...(fix?.edit ? { fixes: [fix.edit] } : {}),
      });
    }
  }
  return out;
}

/** When the nominal value sits more than σ/2 off the window's centre: what centring it would give. */
function centring(nominal: number, current: number, sigma: number, lo: number, hi: number, y: number): string {
  if (!(sigma > 0) || Math.abs(nominal - current) < sigma / 2) return '';
  const centred = fractionWithin(current, sigma, lo, hi);
  if (centred <= y) return '';
  return ` The nominal ${formatEngineering(nominal, { unit: 'A', digits: 3 })} sits ${plain(Math.abs(nominal - current) / current)} off the target; centred, the yield would be ${pct(centred)}.`;
}

/** The source group a ranked contributor name stands for (a resistor's or source's own name, or a mismatch group shown by its devices). */
function groupOf(detail: VariationDetail, o: number, name: string): string | undefined {
  const direct = detail.sources.find((s) => s.group === name);
  if (direct) return direct.group;
  const spec = detail.specs[o];
  const aspect = name.slice(name.lastIndexOf(' ') + 1);
  const first = name.slice(0, name.lastIndexOf(' ')).split('/')[0];
  return detail.sources.find((s) => s.aspect === aspect && s.element === first && (!spec.structure || s.group.startsWith(spec.structure + ' ')))?.group
    ?? detail.sources.find((s) => s.aspect === aspect && s.element === first)?.group;
}

/**
 * The smallest change to the largest contributor that brings the yield to the target, in words
 * and data, each candidate's yield worked out again with its σ; a tighter tolerance is also an
 * edit of the card (`edit`), titled with that yield.
 */
function fixFor(
  detail: VariationDetail,
  o: number,
  group: string,
  lo: number,
  hi: number,
  yieldTarget: number,
  circuit: Circuit,
  documents: Record<string, ParsedDocument>,
): { text: string; data: Record<string, unknown>; edit?: Fix } | undefined {
  const sources = detail.sources;
  const per = sourceRowOf(detail.bySource, o);
  const nominal = Math.abs(detail.result.outputs[o].nominal);
  const members = sources.map((s, k) => (s.group === group ? k : -1)).filter((k) => k >= 0);
  if (members.length === 0) return undefined;
  const first = sources[members[0]];
  const yieldWith = (factor: (k: number) => number): number => {
    const { sigma } = spreadOf(sources, per, (k) => sources[k].sigma * (members.includes(k) ? factor(k) : 1));
    return fractionWithin(nominal, sigma, lo, hi);
  };
  if (first.parameter.kind === 'resistance' || first.parameter.kind === 'source') {
    const list = first.parameter.kind === 'resistance' ? TIGHTER_RESISTORS : TIGHTER_SUPPLIES;
    for (const tol of list) {
      if (tol >= first.figure) continue;
      const y = yieldWith(() => tol / first.figure);
      if (y >= yieldTarget) {
        const resistor = first.parameter.kind === 'resistance';
        const note = `; tol ${tolerancePercentText(tol)}%`;
        const text = resistor ? `A ${plain(tol)} part for ${first.label} (write \`${note}\` on its card) would give ${pct(y)}.` : `Holding ${first.label} to ±${plain(tol)} would give ${pct(y)}.`;
        const edit = toleranceNoteEdit(documents, circuit.elements[first.parameter.element], tol);
        const title = `Write \`${note}\` on ${first.label}'s card (${resistor ? `a ${plain(tol)} part` : `held to ±${plain(tol)}`}): predicted yield ${pct(y)}`;
        return { text, data: { element: first.element, tolerance: tol, yield: y }, ...(edit ? { edit: { title, preferred: true, edits: [edit] } } : {}) };
      }
    }
    return undefined;
  }
  // A part's own spread does not average out over a larger device: the remedy is choosing the parts or trimming each build.
  if (first.partSpread) {
    return {
      text: `${first.element}'s pinch-off voltage spreads from part to part (σ ${formatEngineering(first.sigma, { unit: 'V', digits: 3 })}); no larger device narrows that: select the parts by their pinch-off voltage or IDSS, or trim the resistor that sets the current in each build.`,
      data: { element: first.element, partSpread: 'VTO' },
    };
  }
  for (const k of AREA_FACTORS) {
    const y = yieldWith(() => 1 / Math.sqrt(k));
    if (y >= yieldTarget) {
      const names = [...new Set(members.map((m) => sources[m].element))].join(', ');
      return {
        text: `Making ${names} ${k} times larger (area, M= or W·L, keeping their ratio) would cut their mismatch by √${k} and give ${pct(y)}.`,
        data: { devices: names.split(', '), areaFactor: k, yield: y },
      };
    }
  }
  return undefined;
}

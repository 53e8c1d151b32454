// Attaches quick fixes to findings: one builder per finding code (missing model, mismatched mirror, missed target current).

import type { ResolvedOptions } from '../analysis';
import type { Circuit, Resistor } from '../circuit';
import { parseNumber } from '../elaborate/units';
import type { DcSolver } from '../solve/dc';
import type { Structure } from '../structures/types';
import type { ElementCard, ParsedDocument } from '../syntax/ast';
import type { Finding, Fix, Severity } from '../types';
import { isSeriesName, seriesTolerance, type SeriesName } from './e-series';
import { formatEngineering, formatPercent } from './format';
import { missingModelFixes, unifyMirrorModelFixes } from './model-fixes';
import { sizeResistorForCurrent, valueEdit, type SizingCandidate, type SizingResult } from './resistor-for-current';

/** The next finer series to fall back on when the chosen one has no value within the target's tolerance. */
const FINER: Record<SeriesName, SeriesName | undefined> = { E12: 'E24', E24: 'E96', E48: 'E96', E96: 'E192', E192: undefined };

/** What the fix builders may use. */
export interface FixContext {
  documents: Record<string, ParsedDocument>;
  circuit?: Circuit;
  structures: Structure[];
  options: ResolvedOptions;
  solver?: DcSolver;
}

type FixBuilder = (finding: Finding, ctx: FixContext) => Fix[];

/** The fixes this module offers, by the finding code they attach to (for the README). */
export const FIX_CODES: Record<string, { severity: Severity; summary: string }> = {
  'model-not-found': {
    severity: 'error',
    summary: 'Fix: add a `.model` card of each expected kind with every default parameter written out, after the last top-level `.model` card (or before `.end`).',
  },
  'mirror-unmatched': {
    severity: 'warning',
    summary: 'Fix: make every device of the mirror use the reference device’s model (only the model names change).',
  },
  'target-missed': {
    severity: 'warning',
    summary: 'Fix: set the reference (or Widlar emitter) resistor to the nearest standard value below or above the exact one, each re-solved; when neither meets the target tolerance, the closest value of the next finer series is offered too; the closest is preferred.',
  },
};

const BUILDERS: Record<string, FixBuilder> = {
  'model-not-found': (f, ctx) => missingModelFixes(f, ctx.documents),
  'mirror-unmatched': (f, ctx) => unifyMirrorModelFixes(f, ctx.circuit),
  'target-missed': (f, ctx) => targetFixes(f, ctx),
};

/**
 * Adds `fixes` to every finding whose code has a builder. A builder that finds nothing to
 * offer leaves the finding untouched; fixes already present are kept, new ones appended.
 * Sizing results are cached per (resistor, element, target), so repeated findings cost one sizing.
 */
export function attachFixes(findings: Finding[], ctx: FixContext): void {
  const cache = new Map<string, SizingResult>();
  const withCache: FixContext & { sizingCache?: Map<string, SizingResult> } = { ...ctx, sizingCache: cache };
  for (const f of findings) {
    const build = BUILDERS[f.code];
    if (!build) continue;
    let fixes: Fix[] = [];
    try {
      fixes = build(f, withCache);
    } catch {
      // A fix is a convenience; a builder failure must not take the finding (or the analysis) down.
      fixes = [];
    }
    if (fixes.length > 0) f.fixes = [...(f.fixes ?? []), ...fixes];
  }
}

/** The multiplier between a resistor card's written value and its effective resistance (M=), when the written value is a plain number. */
function writtenScale(r: Resistor, documents: Record<string, ParsedDocument>): number | undefined {
  const doc = documents[r.origin.uri];
  const span = r.origin.valueSpan;
  if (!doc || !span) return undefined;
  const read = parseNumber(doc.text.slice(span.start, span.end));
  if (!read.ok || !(read.value > 0)) return undefined;
  return read.value / r.resistance;
}

/**
 * The text to write into a resistor card's value field so that its effective resistance is
 * `ohms`: the card's M= multiplier is kept, so `R1 a b 8.6k m=2` sized to 3.9 kΩ is written `7.8k`.
 * Undefined when the card's value is an expression or parameter (the user's intent is not overwritten).
 */
export function resistorValueText(r: Resistor, documents: Record<string, ParsedDocument>, ohms: number): string | undefined {
  const scale = writtenScale(r, documents);
  if (scale === undefined || !(ohms > 0) || !Number.isFinite(ohms)) return undefined;
  const text = formatEngineering(ohms * scale, { style: 'netlist', digits: 4 });
  return text === '' ? undefined : text;
}

function cardAt(doc: ParsedDocument | undefined, start: number): ElementCard | undefined {
  const card = doc?.cards.find((c) => c.kind === 'element' && c.span.start === start);
  return card && card.kind === 'element' ? card : undefined;
}

/** Resistor-value fixes for a missed target, from the sizing inputs the target check put in `data`. */
function targetFixes(f: Finding, ctx: FixContext & { sizingCache?: Map<string, SizingResult> }): Fix[] {
  const { circuit, solver, documents } = ctx;
  const d = f.data ?? {};
  const resistorName = typeof d['resistor'] === 'string' ? d['resistor'] : undefined;
  const element = typeof d['element'] === 'string' ? d['element'] : undefined;
  const target = typeof d['target'] === 'number' ? d['target'] : undefined;
  if (!circuit || !solver || !resistorName || !element || target === undefined) return [];
  const r = circuit.elements.find((e) => e.name.toLowerCase() === resistorName.toLowerCase());
  if (!r || r.kind !== 'R') return [];
  // A value written as an expression or parameter is the user's design intent; do not overwrite it with a number.
  const scale = writtenScale(r, documents);
  if (scale === undefined) return [];
  const series: SeriesName = typeof d['series'] === 'string' && isSeriesName(d['series']) ? d['series'] : ctx.options.resistorSeries;
  const structureId = typeof d['structureId'] === 'string' ? d['structureId'] : undefined;
  const structure = structureId ? ctx.structures.find((s) => s.id === structureId) : undefined;

  const size = (sr: SeriesName, knownIdeal?: number): SizingResult => {
    const key = `${r.name}|${element}|${target}|${sr}`;
    let sizing = ctx.sizingCache?.get(key);
    if (!sizing) {
      sizing = sizeResistorForCurrent({ circuit, solver, structure, resistor: r.name, target, series: sr, device: element, temperatureC: ctx.options.temperatureC, knownIdeal });
      ctx.sizingCache?.set(key, sizing);
    }
    return sizing;
  };
  const tolerance = typeof d['tolerance'] === 'number' && d['tolerance'] > 0 ? d['tolerance'] : seriesTolerance(series);
  const sizing = size(series);
  const offered: { c: SizingCandidate; series: SeriesName }[] = sizing.candidates.map((c) => ({ c, series }));
  // When neither neighbour in the chosen series meets the target's tolerance, also offer the closest value of a finer series.
  const finer = FINER[series];
  if (finer && !sizing.candidates.some((c) => Math.abs(c.error) <= tolerance)) {
    const fine = size(finer, sizing.ideal > 0 && !sizing.problem ? sizing.ideal : undefined);
    const closest = fine.candidates.reduce<SizingCandidate | undefined>((a, b) => (!a || Math.abs(b.error) < Math.abs(a.error) ? b : a), undefined);
    if (closest && !offered.some((o) => Math.abs(o.c.value - closest.value) < 1e-9 * closest.value)) offered.push({ c: closest, series: finer });
  }
  const current = r.resistance;
  // Writing the value the card already has would change nothing.
  const useful = offered.filter((o) => Math.abs(o.c.value - current) > 1e-9 * current);
  if (useful.length === 0) return [];
  const best = useful.reduce((a, b) => (Math.abs(b.c.error) < Math.abs(a.c.error) ? b : a));
  const shared = r.origin.instances.length > 0 ? ' in the subcircuit definition (every instance changes)' : '';
  const card = cardAt(documents[r.origin.uri], r.origin.span.start);
  const hasM = card?.params.some((p) => p.name.text.toLowerCase() === 'm') ?? false;
  const fixes: Fix[] = [];
  for (const o of useful) {
    const c = o.c;
    const text = resistorValueText(r, documents, c.value);
    const edit = text === undefined ? undefined : valueEdit(r.origin.uri, r.origin, text);
    if (!edit || text === undefined) continue;
    const perDevice = hasM && Math.abs(scale - 1) > 1e-12 ? ` (${formatEngineering(c.value, { unit: 'Ω' })} effective with M=)` : '';
    fixes.push({
      title: `Set ${r.name} to ${text}${perDevice} (${o.series})${shared}: ${sizing.device} → ${formatEngineering(c.current, { unit: 'A' })}, ${formatPercent(c.error)} from ${formatEngineering(target, { unit: 'A' })}`,
      preferred: o === best ? true : undefined,
      edits: [edit],
    });
  }
  return fixes;
}

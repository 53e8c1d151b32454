// Attaches quick fixes to findings: cheap text fixes eagerly (missing model, mismatched mirror), solver-backed resistor sizing on demand (missed target current).

import { TECHNOLOGIES } from '../structures/technology';
import { elementNamed, structureWithId } from './circuit-index';
import { sizingBlock } from './resistor-for-current';
import type { ResolvedOptions } from '../analysis';
import type { Circuit, Element, Resistor } from '../circuit';
import { parseNumber } from '../elaborate/units';
import type { DcSolver } from '../solve/dc';
import type { OperatingPoint } from '../solve/types';
import type { Structure } from '../structures/types';
import type { ElementCard, ParsedDocument } from '../syntax/ast';
import type { Finding, Fix, Severity } from '../types';
import { isSeriesName, seriesTolerance, type SeriesName } from './e-series';
import { formatEngineering, formatPercent } from './format';
import { fractionWithin } from '../variation/index';
import { misspeltDotCardFixes, missingModelFixes, unifyMirrorModelFixes } from './model-fixes';
import { sizeResistorForCurrent, valueEdit, type SizingCandidate, type SizingResult } from './resistor-for-current';
import { rewriteFixes, rewriteRequest, rewriteRequestOf } from './rewrite-value';
import { resistorValueChange, writtenScale } from './value-edit';
import { headroomFixes, headroomRequest, headroomRequestOf } from './headroom';
import { regionChanges, resolveWith } from './verify';
import { isBipolar } from '../structures/topology';
import { nameTable } from '../names';

/** The next finer series to fall back on when the chosen one has no value within the target's tolerance. */
const FINER: Record<SeriesName, SeriesName | undefined> = { E12: 'E24', E24: 'E96', E48: 'E96', E96: 'E192', E192: undefined };

/** What the eager fix builders may use (no solver: they only edit text). */
export interface FixContext {
  documents: Record<string, ParsedDocument>;
  circuit?: Circuit;
  structures: Structure[];
  options: ResolvedOptions;
  /** Ignored by `attachFixes` (sizing runs on demand, see `sizingFixes`); kept so older callers still type-check. */
  solver?: DcSolver;
}

/** What `sizingFixes` needs: the prepared solver of the analysed circuit (kept by the host between requests). */
export interface SizingFixContext {
  circuit: Circuit;
  solver: DcSolver;
  structures: Structure[];
  documents: Record<string, ParsedDocument>;
  options: ResolvedOptions;
  /** The analysed operating point of `circuit`, where the sizing's solves on a block start (see `SizingContext.point`). */
  point?: OperatingPoint;
  /** Sizing results by (resistor, device, target, series), shared across calls; optional. */
  cache?: Map<string, SizingResult>;
  /** The relative σ of an element's current from the spread analysis, when it has one (docs/VARIATION.md): sizing then says each value's predicted yield and prefers acceptable ones. */
  spread?: { sigmaRelative: (element: string) => number | undefined; yieldTarget: number };
}

/**
 * The marker `attachFixes` puts in `finding.data.sizing` of a `target-missed` finding whose
 * resistor can be sized: what `sizingFixes` needs, as plain data (it survives JSON transfer).
 */
export interface SizingRequest {
  /** Hierarchical name of the resistor to change. */
  resistor: string;
  /** The element whose current is the target. */
  device: string;
  /** Target current magnitude, amperes. */
  target: number;
  /** Relative tolerance of the target (a fraction, 0.02 for ±2 %). */
  tolerance: number;
  series: SeriesName;
  structureId?: string;
}

type FixBuilder = (finding: Finding, ctx: FixContext) => Fix[];

/** The fixes this module offers, by the finding code they attach to (for the README). */
export const FIX_CODES: Record<string, { severity: Severity; summary: string }> = {
  'model-not-found': {
    severity: 'error',
    summary: 'Fix: first the likely slip — a misspelt `.model` card that defines the name corrected, or the model name changed to the defined one a letter away ("did you mean"); then a `.model` card of each expected kind with every default parameter written out (the kind the wiring points at first), after the last top-level `.model` card (or before `.end`).',
  },
  'current-implausible': {
    severity: 'warning',
    summary: 'Fix: write the suspect value as most likely meant (`1M` → `1meg`, `22` → `22k`), offered only when the circuit re-solved with it brings the device below an ampere; the title gives its new current.',
  },
  'node-outside-rails': {
    severity: 'warning',
    summary: 'Fix: write the suspect value as most likely meant, offered only when the circuit re-solved with it brings the node back within the rails; the title gives its new voltage.',
  },
  'dot-card-unknown': {
    severity: 'warning',
    summary: 'Fix: write the known dot card a misspelt one most likely means (`.modle` → `.model`).',
  },
  'mirror-unmatched': {
    severity: 'warning',
    summary: 'Fix: make every device of the mirror use the reference device’s model (only the model names change).',
  },
  'target-yield-low': {
    severity: 'warning',
    summary: 'Fix: when the largest contributor is a resistor or a supply, write the tighter tolerance that brings the predicted yield to the setting on its card (`; tol 1%`, or the figure of the note it has replaced); offered only when that yield, worked out again with the tighter part, meets the setting, and titled with it. A card whose comment holds a target gets the advice in the message only.',
  },
  'target-missed': {
    severity: 'warning',
    summary: 'Fix: set the reference (or Widlar emitter) resistor to the nearest standard value below or above the exact one, each re-solved; when neither meets the target tolerance, the closest value of the next finer series is offered too; the closest that leaves every output in its region is preferred. When the current levels off short of the target, no value is offered and the nearest reachable current is said instead.',
  },
};

const BUILDERS: Record<string, FixBuilder> = nameTable({
  'model-not-found': (f, ctx) => missingModelFixes(f, ctx.documents, ctx.circuit),
  'dot-card-unknown': (f, ctx) => misspeltDotCardFixes(f, ctx.documents),
  'mirror-unmatched': (f, ctx) => unifyMirrorModelFixes(f, ctx.circuit),
});

/**
 * Adds the cheap text-edit `fixes` to every finding whose code has a builder (missing model,
 * mismatched mirror), and marks each `target-missed` finding whose resistor could be sized with
 * `data.sizing` (a `SizingRequest`), without solving anything: the sizing itself is
 * `sizingFixes`, run when the editor asks for code actions. A builder that finds nothing to
 * offer leaves the finding untouched; fixes already present are kept, new ones appended.
 */
export function attachFixes(findings: Finding[], ctx: FixContext): void {
  let byName: Map<string, Element> | undefined;
  const lookup = (name: string): Element | undefined => {
    if (!byName) {
      byName = new Map();
      for (const e of ctx.circuit?.elements ?? []) if (!byName.has(e.name.toLowerCase())) byName.set(e.name.toLowerCase(), e);
    }
    return byName.get(name.toLowerCase());
  };
  for (const f of findings) {
    if (f.code === 'target-missed') {
      const request = sizingRequestOf(f, ctx, lookup);
      if (request) f.data = { ...(f.data ?? {}), sizing: request };
      continue;
    }
    const solved = rewriteRequestOf(f) ?? headroomRequestOf(f, ctx);
    if (solved) {
      f.data = { ...(f.data ?? {}), sizing: solved };
      continue;
    }
    const build = BUILDERS[f.code];
    if (!build) continue;
    let fixes: Fix[] = [];
    try {
      fixes = build(f, ctx);
    } catch {
      // A fix is a convenience; a builder failure must not take the finding (or the analysis) down.
      fixes = [];
    }
    if (fixes.length > 0) f.fixes = [...(f.fixes ?? []), ...fixes];
  }
}

/**
 * Whether a finding carries a marker for fixes that need the solver (`data.sizing`): a missed
 * target's resistor sizing, or a mistyped value's rewrite. Hosts compute those with `sizingFixes`
 * when the editor asks for code actions.
 */
export function hasSolvedFixes(finding: Finding): boolean {
  return sizingRequest(finding) !== undefined || rewriteRequest(finding) !== undefined || headroomRequest(finding) !== undefined;
}

/** The resistor-sizing marker of a `target-missed` finding (`data.sizing`), when it carries a well-formed one. */
export function sizingRequest(finding: Finding): SizingRequest | undefined {
  const m = finding.data?.['sizing'];
  if (!m || typeof m !== 'object' || 'kind' in m) return undefined;
  const r = m as Record<string, unknown>;
  if (typeof r['resistor'] !== 'string' || typeof r['device'] !== 'string') return undefined;
  if (typeof r['target'] !== 'number' || !(r['target'] > 0) || !Number.isFinite(r['target'])) return undefined;
  if (typeof r['series'] !== 'string' || !isSeriesName(r['series'])) return undefined;
  const tolerance = typeof r['tolerance'] === 'number' && r['tolerance'] > 0 && Number.isFinite(r['tolerance']) ? r['tolerance'] : seriesTolerance(r['series']);
  return {
    resistor: r['resistor'],
    device: r['device'],
    target: r['target'],
    tolerance,
    series: r['series'],
    structureId: typeof r['structureId'] === 'string' ? r['structureId'] : undefined,
  };
}

/**
 * The resistor-value fixes of one marked `target-missed` finding: the nearest standard values
 * below and above the exact resistance, each re-solved (plus the closest of the next finer series
 * when neither meets the tolerance), the closest preferred. Costs a few DC solves; meant for the
 * moment the editor asks for code actions. Empty for a finding without a `data.sizing` marker, for
 * a value written as an expression, or when sizing fails. Never throws.
 */
export function sizingFixes(finding: Finding, ctx: SizingFixContext): Fix[] {
  const rewrite = rewriteRequest(finding);
  if (rewrite) {
    try {
      return rewriteFixes(rewrite, ctx.circuit, ctx.solver, ctx.options.temperatureC);
    } catch {
      return [];
    }
  }
  const headroom = headroomRequest(finding);
  if (headroom) {
    try {
      return headroomFixes(headroom, ctx);
    } catch {
      return [];
    }
  }
  const request = sizingRequest(finding);
  if (!request) return [];
  try {
    const { fixes, problem } = targetFixes(request, { ...ctx, cache: ctx.cache ?? new Map() });
    if (fixes.length > 0 || !problem) return fixes;
    // Nothing to offer: say why in a fix the editor shows greyed out, and the command line prints under the finding.
    return [{ title: `No standard value of ${request.resistor} meets the target`, edits: [], disabled: problem }];
  } catch {
    // A fix is a convenience; a sizing failure must not take the request down.
    return [];
  }
}

/**
 * Runs `sizingFixes` for every marked finding and appends the fixes, for hosts that want them all
 * up front (the command line's reports). Repeated targets share one sizing.
 */
export function attachSizingFixes(findings: Finding[], ctx: SizingFixContext, stop?: () => boolean): number {
  const shared = { ...ctx, cache: ctx.cache ?? new Map<string, SizingResult>() };
  let unsized = 0;
  for (const f of findings) {
    if (!hasSolvedFixes(f)) continue;
    // Past the host's budget the remaining findings are counted, not sized.
    if (stop?.()) {
      unsized++;
      continue;
    }
    const fixes = sizingFixes(f, shared);
    if (fixes.length > 0) f.fixes = [...(f.fixes ?? []), ...fixes];
  }
  return unsized;
}

/** The sizing marker for a `target-missed` finding from the target check's data, when its resistor can be rewritten. */
function sizingRequestOf(f: Finding, ctx: FixContext, lookup: (name: string) => Element | undefined): SizingRequest | undefined {
  const { circuit, documents } = ctx;
  const d = f.data ?? {};
  const resistorName = typeof d['resistor'] === 'string' ? d['resistor'] : undefined;
  const element = typeof d['element'] === 'string' ? d['element'] : undefined;
  const target = typeof d['target'] === 'number' ? d['target'] : undefined;
  if (!circuit || !resistorName || !element || target === undefined || !(target > 0) || !Number.isFinite(target)) return undefined;
  const r = lookup(resistorName);
  if (!r || r.kind !== 'R') return undefined;
  // A value written as an expression is rewritten through its parameter (see `resistorValueChange`); it needs a value field.
  if (!r.origin.valueSpan || !documents[r.origin.uri]) return undefined;
  const series: SeriesName = typeof d['series'] === 'string' && isSeriesName(d['series']) ? d['series'] : ctx.options.resistorSeries;
  const tolerance = typeof d['tolerance'] === 'number' && d['tolerance'] > 0 ? d['tolerance'] : seriesTolerance(series);
  const structureId = typeof d['structureId'] === 'string' ? d['structureId'] : undefined;
  return { resistor: r.name, device: element, target, tolerance, series, ...(structureId ? { structureId } : {}) };
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

/**
 * Resistor-value fixes for a missed target, from its sizing marker. Each candidate is re-solved
 * with the whole circuit so its title can say what else changes: an output of the structure that
 * leaves its region, or stays out of it, is named (a saturated BJT output draws base current
 * from the shared line and lowers the others, so a value that meets the target only because of
 * it does not keep meeting it once that output is fixed). The preferred fix is the closest one
 * that leaves every output in its region, else the closest. When no value is offered, `problem`
 * says why.
 */
function targetFixes(request: SizingRequest, ctx: SizingFixContext & { cache: Map<string, SizingResult> }): { fixes: Fix[]; problem?: string } {
  const { circuit, solver, documents } = ctx;
  const { target, series, tolerance } = request;
  const element = request.device;
  const r = elementNamed(circuit, request.resistor);
  if (!r || r.kind !== 'R') return { fixes: [] };
  const structure = request.structureId ? structureWithId(ctx.structures, request.structureId) : undefined;

  const size = (sr: SeriesName, knownIdeal?: number): SizingResult => {
    const key = `${r.name}|${element}|${target}|${sr}`;
    let sizing = ctx.cache.get(key);
    if (!sizing) {
      sizing = sizeResistorForCurrent({ circuit, solver, structure, resistor: r.name, target, series: sr, device: element, temperatureC: ctx.options.temperatureC, knownIdeal, point: ctx.point });
      ctx.cache.set(key, sizing);
    }
    return sizing;
  };
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
  if (useful.length === 0) return { fixes: [], problem: sizing.problem };
  const built: { fix: Fix; error: number; clean: boolean; yieldOk: boolean }[] = [];
  // The spread scales with the current: the candidate's σ is the analysed relative σ times its current.
  const sigmaRel = ctx.spread?.sigmaRelative(element);
  // The re-solves that verify each value run on the part of the circuit the resistor can move, when
  // it splits off (its solution there equals the whole circuit's), so a target costs its block's size.
  const block = structure ? sizingBlock(circuit, r, [element, ...structure.devices, ...structure.reference.elements], ctx.point) : undefined;
  const verifyOn = block ?? { circuit, solver };
  // The structure without the change, what each value's verification compares with. Each value's
  // verification starts where the sizing's solve of it started (`start`), so it reads that solve back.
  const unchanged = structure ? resolveWith(verifyOn.circuit, verifyOn.solver, structure, {}, ctx.options.temperatureC) : undefined;
  for (const o of useful) {
    const c = o.c;
    const change = resistorValueChange(r, documents, c.value);
    if (!change) continue;
    const side = structure ? regionChanges(verifyOn.circuit, verifyOn.solver, structure, { [r.name]: c.value }, ctx.options.temperatureC, element, () => unchanged?.m, c.start) : { text: '', clean: true };
    if (side === undefined) continue; // did not converge with the whole circuit: not offered
    // The targeted output itself leaving (or staying out of) its region is said in the title too.
    const selfOut = 'after' in side ? side.after.m.outOfRegion.find((d: string) => d.toLowerCase() === element.toLowerCase()) : undefined;
    const selfText = selfOut && structure ? `; ${selfOut} is ${TECHNOLOGIES[structure.technology].beyondState} there` : '';
    const predicted = sigmaRel !== undefined && sigmaRel > 0 ? fractionWithin(c.current, sigmaRel * c.current, target * (1 - tolerance), target * (1 + tolerance)) : undefined;
    const yieldText = predicted !== undefined ? `; predicted yield ${formatPercent(predicted, 3).replace(/^\+/, '')}` : '';
    built.push({
      fix: {
        title: `Set ${r.name} to ${change.text}${change.note} (${o.series}): ${sizing.device} → ${formatEngineering(c.current, { unit: 'A' })}, ${formatPercent(c.error)} from ${formatEngineering(target, { unit: 'A' })}${yieldText}${selfText}${side.text}`,
        edits: change.edits,
      },
      error: Math.abs(c.error),
      clean: side.clean,
      yieldOk: predicted === undefined || predicted >= (ctx.spread?.yieldTarget ?? 0),
    });
  }
  if (built.length === 0) return { fixes: [], problem: sizing.problem };
  const clean = built.some((b) => b.clean) ? built.filter((b) => b.clean) : built;
  // Among those, a value whose predicted yield is acceptable wins over a closer one whose is not.
  const pool = clean.some((b) => b.yieldOk) ? clean.filter((b) => b.yieldOk) : clean;
  const best = pool.reduce((a, b) => (b.error < a.error ? b : a));
  best.fix.preferred = true;
  return { fixes: built.map((b) => b.fix) };
}

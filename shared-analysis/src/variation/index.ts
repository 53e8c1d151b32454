// Variation of every output: adjoint sensitivities, worst case and RSS spread with ranked contributors, drift, supply sensitivity and yield against targets (docs/VARIATION.md).

import type { Circuit } from '../circuit';
import type { DcSolveResult, DcSolver } from '../solve/dc';
import type { Structure } from '../structures/types';
import type { ParsedDocument } from '../syntax/ast';
import type { Target } from '../checks/targets';
import { targetElements, targetIndexOf } from '../checks/targets';
import { nameTable } from '../names';
import { topologyOf } from '../structures/topology';
import { elementCurrent, structureOutputs, type OutputSpec } from './outputs';
import { sensitivities, type SensitivityResult, type VariedParameter } from './sensitivity';
import { readCardTolerances, toleranceSources, type SourceSettings, type ToleranceSource } from './sources';
import type { Contribution, OutputVariation, Sensitivity, SourceSummary, VariationResult } from './types';
import { rankOf } from './rank';

declare const performance: { now(): number };

/** Normalised sensitivities kept per output (the largest). */
const SHOWN_SENSITIVITIES = 10;

export type { OutputVariation, VariationResult } from './types';

/** Standard normal cumulative distribution Φ(z), from erfc by the rational Chebyshev approximation of W. J. Cody (Math. Comp. 23, 1969) as given in Numerical Recipes §6.2 (fractional error below 1.2e-7). */
export function normalCdf(z: number): number {
  if (z === Infinity) return 1;
  if (z === -Infinity) return 0;
  const x = -z / Math.SQRT2;
  const t = 1 / (1 + 0.5 * Math.abs(x));
  const y =
    t *
    Math.exp(
      -x * x -
        1.26551223 +
        t * (1.00002368 + t * (0.37409196 + t * (0.09678418 + t * (-0.18628806 + t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))),
    );
  const erfc = x >= 0 ? y : 2 - y;
  return 0.5 * erfc;
}

/** Fraction of a normal population N(mean, σ) inside [lo, hi]. */
export function fractionWithin(mean: number, sigma: number, lo: number, hi: number): number {
  if (!(sigma > 0)) return mean >= lo && mean <= hi ? 1 : 0;
  return Math.max(0, Math.min(1, normalCdf((hi - mean) / sigma) - normalCdf((lo - mean) / sigma)));
}

export interface VariationContext {
  circuit: Circuit;
  structures: Structure[];
  documents: Record<string, ParsedDocument>;
  solver: DcSolver;
  nominal: DcSolveResult;
  targets: Target[];
  settings: SourceSettings;
  /** Target tolerance when an `expect` gives none. */
  defaultTargetTolerance: number;
}

/** The tolerance sources an output depends on and its derivatives with respect to them. */
export interface SourceRow {
  index: ArrayLike<number>;
  value: ArrayLike<number>;
}

/**
 * Every output's source row in compressed form: output o depends on sources
 * `index[start[o] … start[o + 1] − 1]` with d(output)/d(source) in `value` at the same places.
 */
export interface SourceRows {
  start: Int32Array;
  index: Int32Array;
  value: Float64Array;
}

/** Output o's row of `rows` (views, no copy). */
export function sourceRowOf(rows: SourceRows, o: number): SourceRow {
  const from = rows.start[o];
  const to = rows.start[o + 1];
  return { index: rows.index.subarray(from, to), value: rows.value.subarray(from, to) };
}

/** Everything the yield finding and Monte Carlo need beyond the plain result. */
export interface VariationDetail {
  result: VariationResult;
  specs: OutputSpec[];
  sources: ToleranceSource[];
  /** Per output: the tolerance sources it depends on (indices into `sources`) and d(output)/d(source). */
  bySource: SourceRows;
  /** Time of the derivatives alone, ms: the Jacobian factored at the solution, ∂F/∂p and every transposed solve (the benchmark's figure). */
  sensitivityMs: number;
}

/** The spread of every structure output and target element at the nominal solution; undefined when it did not converge. */
export function analyseVariation(ctx: VariationContext): VariationDetail | undefined {
  const t0 = performance.now();
  const { circuit, structures, solver, nominal } = ctx;
  if (!nominal.op.converged) return undefined;
  const specs = structureOutputs(circuit, structures);
  const targetOf = ctx.targets.length > 0 ? addTargetOutputs(circuit, structures, ctx.targets, ctx.defaultTargetTolerance, specs) : new Map<string, TargetWindow>();
  if (specs.length === 0) return undefined;
  const tLinearise = performance.now();
  const lin = solver.linearise(nominal);
  const lineariseMs = performance.now() - tLinearise;
  if (!lin) return undefined;

  const sources = toleranceSources(circuit, structures, readCardTolerances(ctx.documents), ctx.settings, nominal.op.temperatureC);
  // Parameters: every tolerance source, the temperature, and every voltage source (for %/V) and resistor (for % per %).
  const params = new ParameterList(circuit.elements.length);
  const sourceParam = sources.map((s) => params.add(s.parameter));
  const temperature = params.add({ kind: 'temperature' });
  const supplies: { name: string; j: number }[] = [];
  const resistors: { name: string; j: number; ohms: number }[] = [];
  circuit.elements.forEach((el, i) => {
    if (el.kind === 'V' && Number.isFinite(el.dc) && el.dc !== 0) supplies.push({ name: el.name, j: params.add({ kind: 'source', element: i }) });
    if (el.kind === 'R' && Number.isFinite(el.resistance) && el.resistance > 0) resistors.push({ name: el.name, j: params.add({ kind: 'resistance', element: i }), ohms: el.resistance });
  });

  const tSensitivities = performance.now();
  const sens = sensitivities(lin, specs.map((s) => s.functional), params.list);
  // The derivatives proper: the Jacobian factored at the solution, ∂F/∂p and one transposed solve per output.
  const sensitivityMs = lineariseMs + performance.now() - tSensitivities;
  const shown = shownForms(params.list.length, sources, sourceParam, resistors, supplies);
  const bySource = sourceRowsOf(sens, sourceParam, params.list.length, sources.length);
  const supplyOfParam = new Int32Array(params.list.length).fill(-1);
  supplies.forEach((s, k) => (supplyOfParam[s.j] = k));
  const supplySlope = new Float64Array(supplies.length);
  const groups = groupIndexOf(sources);
  const top = new TopSensitivities(SHOWN_SENSITIVITIES);
  const outputs: OutputVariation[] = new Array(specs.length);
  for (let o = 0; o < specs.length; o++) {
    const spec = specs[o];
    const y = sens.value[o];
    const scale = Math.abs(y) > 0 ? Math.abs(y) : 1;
    let tempco = 0;
    supplySlope.fill(0);
    for (let q = sens.rowStart[o]; q < sens.rowStart[o + 1]; q++) {
      const j = sens.index[q];
      if (j === temperature) tempco = sens.derivative[q];
      if (supplyOfParam[j] >= 0) supplySlope[supplyOfParam[j]] = sens.derivative[q];
    }
    const { sigma, worstCase, contributors } = spreadOfRange(sources, groups, bySource.index, bySource.value, bySource.start[o], bySource.start[o + 1], undefined);
    const supplyPercentPerVolt: Record<string, number> = nameTable();
    supplies.forEach((s, k) => (supplyPercentPerVolt[s.name] = (supplySlope[k] / scale) * 100));
    const target = spec.element && (spec.role === 'element' || spec.role === 'iout') ? targetOf.get(spec.element) : undefined;
    // Field by field, in the order the JSON shows them (the optional structure and element in their places).
    const out = { output: spec.label, key: spec.key, unit: spec.unit } as OutputVariation;
    if (spec.structure) out.structure = spec.structure;
    if (spec.element) out.element = spec.element;
    out.nominal = y;
    out.sigma = sigma;
    out.sigmaRelative = sigma / scale;
    out.worstCase = worstCase;
    out.worstCaseRelative = worstCase / scale;
    out.tempcoPpmPerC = (tempco / scale) * 1e6;
    out.supplyPercentPerVolt = supplyPercentPerVolt;
    out.contributors = contributors;
    out.sensitivities = top.of(sens, shown, o, scale);
    if (target) {
      const lo = target.current * (1 - target.tolerance);
      const hi = target.current * (1 + target.tolerance);
      out.target = { ...target, yield: fractionWithin(Math.abs(y), sigma, lo, hi) };
    }
    outputs[o] = out;
  }
  const summaries: SourceSummary[] = sources.map((s) => ({
    name: s.label,
    kind: s.parameter.kind === 'resistance' ? 'resistor' : s.parameter.kind === 'source' ? 'source' : s.partSpread ? 'part spread' : 'mismatch',
    figure: s.figure,
    from: s.from,
  }));
  const result: VariationResult = { outputs, sources: summaries, stats: { adjointSolves: sens.adjointSolves, parameters: params.list.length, ms: performance.now() - t0 } };
  return { result, specs, sources, bySource, sensitivityMs };
}

/** A target's window: its current and relative tolerance. */
interface TargetWindow {
  current: number;
  tolerance: number;
}

/** The window of every element with a target, by element name; each such element not yet among `specs` joins them as an output. */
function addTargetOutputs(circuit: Circuit, structures: Structure[], targets: readonly Target[], defaultTolerance: number, specs: OutputSpec[]): Map<string, TargetWindow> {
  const targetOf = new Map<string, TargetWindow>();
  const have = new Set(specs.map((s) => s.key));
  // A target on a structure's output device reads that output: its figures are not computed and listed twice.
  for (const s of specs) if (s.role === 'iout' && s.element) have.add(`element ${s.element}`);
  const index = targetIndexOf(circuit, structures);
  const elementIndex = topologyOf(circuit).elementIndex;
  for (const t of targets) {
    for (const el of targetElements(circuit, t, index)) {
      const key = `element ${el.name}`;
      targetOf.set(el.name, { current: t.current, tolerance: t.tolerance ?? defaultTolerance });
      if (have.has(key)) continue;
      const f = elementCurrent(circuit, elementIndex.get(el.name)!);
      if (!f) continue;
      have.add(key);
      specs.push({ key, label: el.name, unit: 'A', role: 'element', element: el.name, functional: f });
    }
  }
  return targetOf;
}

/** The varied parameters, each once: a resistor's or source's by its element, a model parameter by its name and element. */
class ParameterList {
  readonly list: VariedParameter[] = [];
  private readonly resistance: Int32Array;
  private readonly source: Int32Array;
  private readonly model = new Map<string, Int32Array>();
  private temperature = -1;

  constructor(private readonly elementCount: number) {
    this.resistance = new Int32Array(elementCount).fill(-1);
    this.source = new Int32Array(elementCount).fill(-1);
  }

  /** The index of `p` in the list, added when new. */
  add(p: VariedParameter): number {
    if (p.kind === 'temperature') return this.temperature >= 0 ? this.temperature : (this.temperature = this.push(p));
    let table = p.kind === 'resistance' ? this.resistance : this.source;
    if (p.kind === 'model') {
      const byElement = this.model.get(p.param);
      if (byElement) table = byElement;
      else this.model.set(p.param, (table = new Int32Array(this.elementCount).fill(-1)));
    }
    return table[p.element] >= 0 ? table[p.element] : (table[p.element] = this.push(p));
  }

  private push(p: VariedParameter): number {
    this.list.push(p);
    return this.list.length - 1;
  }
}

/** How each parameter's derivative is shown normalised: value · factor / |y|, in `unit`, under `name` (`isShown` 0: not shown). */
interface ShownForms {
  isShown: Uint8Array;
  factor: Float64Array;
  name: string[];
  unit: string[];
}

function shownForms(count: number, sources: readonly ToleranceSource[], sourceParam: readonly number[], resistors: readonly { name: string; j: number; ohms: number }[], supplies: readonly { name: string; j: number }[]): ShownForms {
  const forms: ShownForms = { isShown: new Uint8Array(count), factor: new Float64Array(count), name: new Array<string>(count).fill(''), unit: new Array<string>(count).fill('') };
  const show = (j: number, name: string, unit: string, factor: number): void => {
    forms.isShown[j] = 1;
    forms.name[j] = name;
    forms.unit[j] = unit;
    forms.factor[j] = factor;
  };
  for (const r of resistors) show(r.j, r.name, '%/%', r.ohms);
  for (const s of supplies) show(s.j, s.name, '%/V', 100);
  sources.forEach((s, k) => {
    if (s.parameter.kind !== 'model') return;
    const j = sourceParam[k];
    // A VBE shift ΔV is the IS ratio e^(−ΔV/(NF·VT)): dIS/dΔV = −σ_IS/σ_V (docs/VARIATION.md); per millivolt of the device's own shift.
    if (s.aspect === 'VBE') show(j, s.label, '%/mV', (-s.sigma / s.figure) * 1e-3 * 100);
    else if (s.parameter.param === 'VTO') show(j, s.label, '%/mV', 1e-3 * 100);
    else show(j, s.label, '%/%', s.nominal);
  });
  return forms;
}

/** Every output's derivatives with respect to the tolerance sources, picked out of its parameter row (parameter order kept). */
function sourceRowsOf(sens: SensitivityResult, sourceParam: readonly number[], paramCount: number, sourceCount: number): SourceRows {
  const sourceOfParam = new Int32Array(paramCount).fill(-1);
  for (let k = 0; k < sourceCount; k++) sourceOfParam[sourceParam[k]] = k;
  const outputs = sens.rowStart.length - 1;
  const rows: SourceRows = { start: new Int32Array(outputs + 1), index: new Int32Array(sens.index.length), value: new Float64Array(sens.index.length) };
  let at = 0;
  for (let o = 0; o < outputs; o++) {
    for (let q = sens.rowStart[o]; q < sens.rowStart[o + 1]; q++) {
      const k = sourceOfParam[sens.index[q]];
      if (k < 0) continue;
      rows.index[at] = k;
      rows.value[at++] = sens.derivative[q];
    }
    rows.start[o + 1] = at;
  }
  return rows;
}

/**
 * The largest normalised sensitivities of one output by `rankOf`, kept in the order they are
 * offered when equal (ties keep the parameter order), in reused typed arrays.
 */
class TopSensitivities {
  private readonly value: Float64Array;
  private readonly rank: Float64Array;
  private readonly param: Int32Array;
  private count = 0;

  constructor(private readonly size: number) {
    this.value = new Float64Array(size);
    this.rank = new Float64Array(size);
    this.param = new Int32Array(size);
  }

  /** Output o's list, from its row of `sens` normalised by `shown` and its magnitude `scale`. */
  of(sens: SensitivityResult, shown: ShownForms, o: number, scale: number): Sensitivity[] {
    this.count = 0;
    for (let q = sens.rowStart[o]; q < sens.rowStart[o + 1]; q++) {
      const j = sens.index[q];
      if (shown.isShown[j]) this.offer((sens.derivative[q] * shown.factor[j]) / scale, j);
    }
    return this.list(shown);
  }

  private offer(value: number, j: number): void {
    const rank = rankOf(value);
    if (this.count === this.size && !(rank > this.rank[this.size - 1])) return;
    let at = this.count < this.size ? this.count++ : this.size - 1;
    while (at > 0 && rank > this.rank[at - 1]) {
      this.value[at] = this.value[at - 1];
      this.rank[at] = this.rank[at - 1];
      this.param[at] = this.param[at - 1];
      at--;
    }
    this.value[at] = value;
    this.rank[at] = rank;
    this.param[at] = j;
  }

  private list(shown: ShownForms): Sensitivity[] {
    const out: Sensitivity[] = new Array(this.count);
    for (let k = 0; k < this.count; k++) {
      const j = this.param[k];
      out[k] = { parameter: shown.name[j], unit: shown.unit[j], value: this.value[k] };
    }
    return out;
  }
}

/**
 * The group of each source as a number (sources of one group are summed when ranked), built once
 * per list of sources, with the names of mismatch groups kept once made (a name lists the devices
 * that matter, mostly all of the group's or one).
 */
interface GroupIndex {
  of: Int32Array;
  names: string[];
  aspects: (string | undefined)[];
  /** Sources per group. */
  size: Int32Array;
  /** A mismatch group's name when all its devices matter (made on first use). */
  allName: (string | undefined)[];
  /** A mismatch source's name when it alone matters in its group (made on first use). */
  aloneName: (string | undefined)[];
  /** Each source's σ and worst-case bound, as columns (a row's spread reads them for every entry). */
  sigma: Float64Array;
  bound: Float64Array;
}
const groupIndexes = new WeakMap<readonly ToleranceSource[], GroupIndex>();
function groupIndexOf(sources: readonly ToleranceSource[]): GroupIndex {
  let g = groupIndexes.get(sources);
  if (g) return g;
  const byName = new Map<string, number>();
  const of = new Int32Array(sources.length);
  const names: string[] = [];
  const aspects: (string | undefined)[] = [];
  sources.forEach((s, k) => {
    let i = byName.get(s.group);
    if (i === undefined) {
      byName.set(s.group, (i = names.length));
      names.push(s.group);
      aspects.push(s.aspect);
    }
    of[k] = i;
  });
  const size = new Int32Array(names.length);
  for (let k = 0; k < of.length; k++) size[of[k]]++;
  const sigma = Float64Array.from(sources, (s) => s.sigma);
  const bound = Float64Array.from(sources, (s) => s.bound);
  g = { of, names, aspects, size, allName: new Array(names.length).fill(undefined), aloneName: new Array(sources.length).fill(undefined), sigma, bound };
  groupIndexes.set(sources, g);
  return g;
}

/** A mismatch group's ranked name: the devices that carry at least 1 % of its variance `v` in this row, then the parameter (`Q1/Q2 VBE`). */
function mismatchName(sources: readonly ToleranceSource[], groups: GroupIndex, g: number, v: number, index: ArrayLike<number>, value: ArrayLike<number>, from: number, to: number, sigmaOf: (k: number) => number): string {
  const matters = (q: number): boolean => {
    if (groups.of[index[q]] !== g) return false;
    const a = Math.abs(value[q] * sigmaOf(index[q]));
    return a * a >= 0.01 * v;
  };
  let count = 0;
  let last = -1;
  for (let q = from; q < to; q++) {
    if (!matters(q)) continue;
    count++;
    last = index[q];
  }
  if (count === 1 && groups.aloneName[last] !== undefined) return groups.aloneName[last]!;
  if (count === groups.size[g] && groups.allName[g] !== undefined) return groups.allName[g]!;
  let members = '';
  for (let q = from; q < to; q++) if (matters(q)) members = members ? `${members}/${sources[index[q]].element}` : sources[index[q]].element;
  const name = `${members} ${groups.aspects[g]}`;
  if (count === 1) groups.aloneName[last] = name;
  else if (count === groups.size[g]) groups.allName[g] = name;
  return name;
}

/** Per-group sums of one call and the list of groups it touched, kept between calls (reset after use). */
let groupVariance = new Float64Array(64);
let groupWorst = new Float64Array(64);
let groupTouched = new Int32Array(64);

/** Worst case, σ and the contributors ranked by variance (the 8 largest), summed within each group, for one output's derivatives with respect to its sources. */
export function spreadOf(sources: readonly ToleranceSource[], per: SourceRow, sigmaOverride?: (k: number) => number): { sigma: number; worstCase: number; contributors: Contribution[] } {
  return spreadOfRange(sources, groupIndexOf(sources), per.index, per.value, 0, per.index.length, sigmaOverride);
}

/** `spreadOf` over entries `from … to − 1` of a row's arrays. */
function spreadOfRange(
  sources: readonly ToleranceSource[],
  groups: GroupIndex,
  index: ArrayLike<number>,
  value: ArrayLike<number>,
  from: number,
  to: number,
  sigmaOverride: ((k: number) => number) | undefined,
): { sigma: number; worstCase: number; contributors: Contribution[] } {
  if (groupVariance.length < groups.names.length) {
    groupVariance = new Float64Array(groups.names.length * 2);
    groupWorst = new Float64Array(groups.names.length * 2);
    groupTouched = new Int32Array(groups.names.length * 2);
  }
  const sigmas = groups.sigma;
  const bounds = groups.bound;
  const sigmaOf = (k: number): number => (sigmaOverride ? sigmaOverride(k) : sigmas[k]);
  let touched = 0;
  let variance = 0;
  let worstCase = 0;
  for (let q = from; q < to; q++) {
    const k = index[q];
    const sigma = sigmaOverride ? sigmaOverride(k) : sigmas[k];
    const bound = sigmaOverride ? (bounds[k] / sigmas[k]) * sigma : bounds[k];
    const a = Math.abs(value[q] * sigma);
    const w = Math.abs(value[q] * bound);
    variance += a * a;
    worstCase += w;
    const g = groups.of[k];
    if (groupVariance[g] === 0 && groupWorst[g] === 0 && !groupListed(touched, g)) groupTouched[touched++] = g;
    groupVariance[g] += a * a;
    groupWorst[g] += w;
  }
  const contributors = rankedScratch;
  const ranks = rankScratch;
  contributors.length = 0;
  ranks.length = 0;
  for (let t = 0; t < touched; t++) {
    const g = groupTouched[t];
    const v = groupVariance[g];
    const worst = groupWorst[g];
    groupVariance[g] = 0;
    groupWorst[g] = 0;
    if (!(v > 0)) continue;
    const name = groups.aspects[g] ? mismatchName(sources, groups, g, v, index, value, from, to, sigmaOf) : groups.names[g];
    // Ranked by `rankOf` of the share (worked out once per contributor), then by name: inserted in place.
    const c: Contribution = { name, share: variance > 0 ? v / variance : 0, sigma: Math.sqrt(v), worstCase: worst };
    const rank = rankOf(c.share);
    let at = contributors.length;
    contributors.push(c);
    ranks.push(rank);
    for (; at > 0 && (rank > ranks[at - 1] || (rank === ranks[at - 1] && name < contributors[at - 1].name)); at--) {
      contributors[at] = contributors[at - 1];
      ranks[at] = ranks[at - 1];
    }
    contributors[at] = c;
    ranks[at] = rank;
  }
  return { sigma: Math.sqrt(variance), worstCase, contributors: contributors.slice(0, MAX_CONTRIBUTORS) };
}

/** Contributors kept per output (the largest). */
const MAX_CONTRIBUTORS = 8;
/** The ranking of one call, copied out at its exact length (a list grown by pushing keeps spare room in every output). */
const rankedScratch: Contribution[] = [];
const rankScratch: number[] = [];

/** Whether group g is among the first `count` touched groups of the current call. */
function groupListed(count: number, g: number): boolean {
  for (let t = 0; t < count; t++) if (groupTouched[t] === g) return true;
  return false;
}

/** Attaches each structure's output variations (`structure.variation`) from a result. */
export function attachVariation(structures: Structure[], result: VariationResult): void {
  const byStructure = new Map<string, OutputVariation[]>();
  for (const o of result.outputs) {
    if (!o.structure) continue;
    const list = byStructure.get(o.structure);
    if (list) list.push(o);
    else byStructure.set(o.structure, [o]);
  }
  for (const s of structures) {
    const list = byStructure.get(s.id);
    if (!list) continue;
    const iout: Record<string, OutputVariation> = nameTable();
    const voltages: Record<string, OutputVariation> = nameTable();
    let iref: OutputVariation | undefined;
    for (const o of list) {
      if (o.key.endsWith(' iref')) iref = o;
      else if (o.unit === 'V') voltages[o.output] = o;
      else iout[o.output] = o;
    }
    s.variation = { ...(iref ? { iref } : {}), iout, ...(Object.keys(voltages).length ? { voltages } : {}) };
  }
}


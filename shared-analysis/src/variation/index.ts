// Variation of every output: adjoint sensitivities, worst case and RSS spread with ranked contributors, drift, supply sensitivity and yield against targets (docs/VARIATION.md).

import type { Circuit } from '../circuit';
import type { DcSolveResult, DcSolver } from '../solve/dc';
import type { Structure } from '../structures/types';
import type { ParsedDocument } from '../syntax/ast';
import type { Target } from '../checks/targets';
import { targetElements, TargetIndex } from '../checks/targets';
import { nameTable } from '../names';
import { elementCurrent, structureOutputs, type OutputSpec } from './outputs';
import { derivativeOf, sensitivities, type VariedParameter } from './sensitivity';
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
  index: number[];
  value: number[];
}

/** Everything the yield finding and Monte Carlo need beyond the plain result. */
export interface VariationDetail {
  result: VariationResult;
  specs: OutputSpec[];
  sources: ToleranceSource[];
  /** Per output: the tolerance sources it depends on (indices into `sources`) and d(output)/d(source). */
  bySource: SourceRow[];
}

/** The spread of every structure output and target element at the nominal solution; undefined when it did not converge. */
export function analyseVariation(ctx: VariationContext): VariationDetail | undefined {
  const t0 = performance.now();
  const { circuit, structures, solver, nominal } = ctx;
  if (!nominal.op.converged) return undefined;
  const specs = structureOutputs(circuit, structures);
  const targetOf = new Map<string, { current: number; tolerance: number }>();
  const have = new Set(specs.map((s) => s.key));
  // A target on a structure's output device reads that output: its figures are not computed and listed twice.
  for (const s of specs) if (s.role === 'iout' && s.element) have.add(`element ${s.element}`);
  const index = ctx.targets.length > 0 ? new TargetIndex(circuit, structures) : undefined;
  const elementIndex = new Map<string, number>();
  circuit.elements.forEach((e, i) => elementIndex.set(e.name, i));
  for (const t of ctx.targets) {
    for (const el of targetElements(circuit, t, index!)) {
      const key = `element ${el.name}`;
      targetOf.set(el.name, { current: t.current, tolerance: t.tolerance ?? ctx.defaultTargetTolerance });
      if (have.has(key)) continue;
      const f = elementCurrent(circuit, elementIndex.get(el.name)!);
      if (!f) continue;
      have.add(key);
      specs.push({ key, label: el.name, unit: 'A', role: 'element', element: el.name, functional: f });
    }
  }
  if (specs.length === 0) return undefined;
  const lin = solver.linearise(nominal);
  if (!lin) return undefined;

  const sources = toleranceSources(circuit, structures, readCardTolerances(ctx.documents), ctx.settings, nominal.op.temperatureC);
  // Parameters: every tolerance source, the temperature, and every voltage source (for %/V) and resistor (for % per %).
  const params: VariedParameter[] = [];
  // Each parameter once: keyed by kind and element (a model parameter by its name, then its element).
  const plainIndex = new Map<number, number>();
  const modelIndex = new Map<string, Map<number, number>>();
  const addParam = (p: VariedParameter): number => {
    let table = plainIndex;
    let k = 0;
    if (p.kind === 'model') {
      let byElement = modelIndex.get(p.param);
      if (!byElement) modelIndex.set(p.param, (byElement = new Map()));
      table = byElement;
      k = p.element;
    } else if (p.kind !== 'temperature') k = (p.element + 1) * 2 + (p.kind === 'resistance' ? 0 : 1);
    let j = table.get(k);
    if (j === undefined) {
      j = params.length;
      params.push(p);
      table.set(k, j);
    }
    return j;
  };
  const sourceParam = sources.map((s) => addParam(s.parameter));
  const temperature = addParam({ kind: 'temperature' });
  const supplies: { name: string; j: number }[] = [];
  const resistors: { name: string; j: number; ohms: number }[] = [];
  circuit.elements.forEach((el, i) => {
    if (el.kind === 'V' && Number.isFinite(el.dc) && el.dc !== 0) supplies.push({ name: el.name, j: addParam({ kind: 'source', element: i }) });
    if (el.kind === 'R' && Number.isFinite(el.resistance) && el.resistance > 0) resistors.push({ name: el.name, j: addParam({ kind: 'resistance', element: i }), ohms: el.resistance });
  });

  const sens = sensitivities(lin, specs.map((s) => s.functional), params);
  const sourceOfParam = new Int32Array(params.length).fill(-1);
  sourceParam.forEach((j, k) => (sourceOfParam[j] = k));
  // How each parameter's derivative is shown normalised: value · factor / |y|, in `unit`.
  const shown: ({ name: string; unit: string; factor: number } | undefined)[] = new Array(params.length).fill(undefined);
  for (const r of resistors) shown[r.j] = { name: r.name, unit: '%/%', factor: r.ohms };
  for (const s of supplies) shown[s.j] = { name: s.name, unit: '%/V', factor: 100 };
  sources.forEach((s, k) => {
    if (s.parameter.kind !== 'model') return;
    const j = sourceParam[k];
    // A VBE shift ΔV is the IS ratio e^(−ΔV/(NF·VT)): dIS/dΔV = −σ_IS/σ_V (docs/VARIATION.md); per millivolt of the device's own shift.
    if (s.aspect === 'VBE') shown[j] = { name: s.label, unit: '%/mV', factor: (-s.sigma / s.figure) * 1e-3 * 100 };
    else if (s.aspect === 'VTH') shown[j] = { name: s.label, unit: '%/mV', factor: 1e-3 * 100 };
    else shown[j] = { name: s.label, unit: '%/%', factor: s.nominal };
  });
  const bySource: SourceRow[] = [];
  const outputs: OutputVariation[] = specs.map((spec, o) => {
    const y = sens.value[o];
    const row = sens.derivative[o];
    const scale = Math.abs(y) > 0 ? Math.abs(y) : 1;
    const per: SourceRow = { index: [], value: [] };
    // The ten largest normalised sensitivities by `rankOf`, kept in order as they come (ties keep the parameter order).
    const topValue: number[] = [];
    const topRank: number[] = [];
    const topParam: number[] = [];
    for (let q = 0; q < row.index.length; q++) {
      const j = row.index[q];
      const k = sourceOfParam[j];
      if (k >= 0) {
        per.index.push(k);
        per.value.push(row.value[q]);
      }
      const how = shown[j];
      if (!how) continue;
      const value = (row.value[q] * how.factor) / scale;
      const rank = rankOf(value);
      if (topValue.length === SHOWN_SENSITIVITIES && !(rank > topRank[SHOWN_SENSITIVITIES - 1])) continue;
      let at = topValue.length;
      while (at > 0 && rank > topRank[at - 1]) at--;
      topValue.splice(at, 0, value);
      topRank.splice(at, 0, rank);
      topParam.splice(at, 0, j);
      if (topValue.length > SHOWN_SENSITIVITIES) {
        topValue.pop();
        topRank.pop();
        topParam.pop();
      }
    }
    const sensList: Sensitivity[] = topValue.map((value, k) => {
      const how = shown[topParam[k]]!;
      return { parameter: how.name, unit: how.unit, value };
    });
    bySource.push(per);
    const spread = spreadOf(sources, per);
    const supplyPercentPerVolt: Record<string, number> = nameTable();
    for (const s of supplies) supplyPercentPerVolt[s.name] = (derivativeOf(sens, o, s.j) / scale) * 100;
    const target = spec.element && (spec.role === 'element' || spec.role === 'iout') ? targetOf.get(spec.element) : undefined;
    const out: OutputVariation = {
      output: spec.label,
      key: spec.key,
      unit: spec.unit,
      ...(spec.structure ? { structure: spec.structure } : {}),
      ...(spec.element ? { element: spec.element } : {}),
      nominal: y,
      sigma: spread.sigma,
      sigmaRelative: spread.sigma / scale,
      worstCase: spread.worstCase,
      worstCaseRelative: spread.worstCase / scale,
      tempcoPpmPerC: (derivativeOf(sens, o, temperature) / scale) * 1e6,
      supplyPercentPerVolt,
      contributors: spread.contributors.slice(0, 8),
      sensitivities: sensList,
    };
    if (target) {
      const lo = target.current * (1 - target.tolerance);
      const hi = target.current * (1 + target.tolerance);
      out.target = { ...target, yield: fractionWithin(Math.abs(y), spread.sigma, lo, hi) };
    }
    return out;
  });
  const summaries: SourceSummary[] = sources.map((s) => ({
    name: s.label,
    kind: s.parameter.kind === 'resistance' ? 'resistor' : s.parameter.kind === 'source' ? 'source' : 'mismatch',
    figure: s.figure,
    from: s.from,
  }));
  const result: VariationResult = { outputs, sources: summaries, stats: { adjointSolves: sens.adjointSolves, parameters: params.length, ms: performance.now() - t0 } };
  return { result, specs, sources, bySource };
}

/** The group of each source as a number (sources of one group are summed when ranked), built once per list of sources. */
interface GroupIndex {
  of: Int32Array;
  names: string[];
  aspects: (string | undefined)[];
}
const groupIndexes = new WeakMap<readonly ToleranceSource[], GroupIndex>();
function groupIndexOf(sources: readonly ToleranceSource[]): GroupIndex {
  let g = groupIndexes.get(sources);
  if (g) return g;
  const byName = new Map<string, number>();
  g = { of: new Int32Array(sources.length), names: [], aspects: [] };
  sources.forEach((s, k) => {
    let i = byName.get(s.group);
    if (i === undefined) {
      byName.set(s.group, (i = g!.names.length));
      g!.names.push(s.group);
      g!.aspects.push(s.aspect);
    }
    g!.of[k] = i;
  });
  groupIndexes.set(sources, g);
  return g;
}
/** Per-group sums of one call, kept between calls (reset after use). */
let groupVariance = new Float64Array(64);
let groupWorst = new Float64Array(64);

/** Worst case, σ and the contributors ranked by variance, summed within each group, for one output's derivatives with respect to its sources. */
export function spreadOf(sources: readonly ToleranceSource[], per: SourceRow, sigmaOverride?: (k: number) => number): { sigma: number; worstCase: number; contributors: Contribution[] } {
  const groups = groupIndexOf(sources);
  if (groupVariance.length < groups.names.length) {
    groupVariance = new Float64Array(groups.names.length * 2);
    groupWorst = new Float64Array(groups.names.length * 2);
  }
  const touched: number[] = [];
  let variance = 0;
  let worstCase = 0;
  for (let q = 0; q < per.index.length; q++) {
    const k = per.index[q];
    const s = sources[k];
    const sigma = sigmaOverride ? sigmaOverride(k) : s.sigma;
    const bound = sigmaOverride ? (s.bound / s.sigma) * sigma : s.bound;
    const a = Math.abs(per.value[q] * sigma);
    const w = Math.abs(per.value[q] * bound);
    variance += a * a;
    worstCase += w;
    const g = groups.of[k];
    if (groupVariance[g] === 0 && groupWorst[g] === 0 && !touched.includes(g)) touched.push(g);
    groupVariance[g] += a * a;
    groupWorst[g] += w;
  }
  const contributors: Contribution[] = [];
  for (const g of touched) {
    const v = groupVariance[g];
    const worst = groupWorst[g];
    groupVariance[g] = 0;
    groupWorst[g] = 0;
    if (!(v > 0)) continue;
    const aspect = groups.aspects[g];
    let name = groups.names[g];
    if (aspect) {
      // A mismatch group is named by the devices that carry at least 1 % of its variance (`Q1/Q2 VBE`).
      const members: string[] = [];
      for (let q = 0; q < per.index.length; q++) {
        const k = per.index[q];
        if (groups.of[k] !== g) continue;
        const a = Math.abs(per.value[q] * (sigmaOverride ? sigmaOverride(k) : sources[k].sigma));
        if (a * a >= 0.01 * v) members.push(sources[k].element);
      }
      name = `${members.join('/')} ${aspect}`;
    }
    contributors.push({ name, share: variance > 0 ? v / variance : 0, sigma: Math.sqrt(v), worstCase: worst });
  }
  // Ranked by `rankOf` of the share, worked out once per contributor rather than per comparison.
  if (contributors.length > 1) {
    const rank = new Map(contributors.map((c) => [c, rankOf(c.share)]));
    contributors.sort((a, b) => rank.get(b)! - rank.get(a)! || (a.name < b.name ? -1 : 1));
  }
  return { sigma: Math.sqrt(variance), worstCase, contributors };
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


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
  const paramKey = (p: VariedParameter): string => (p.kind === 'temperature' ? 'T' : p.kind === 'model' ? `m${p.element}:${p.param}` : `${p.kind[0]}${p.element}`);
  const paramIndex = new Map<string, number>();
  const addParam = (p: VariedParameter): number => {
    const k = paramKey(p);
    let j = paramIndex.get(k);
    if (j === undefined) {
      j = params.length;
      params.push(p);
      paramIndex.set(k, j);
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
    const sensList: Sensitivity[] = [];
    for (let q = 0; q < row.index.length; q++) {
      const j = row.index[q];
      const k = sourceOfParam[j];
      if (k >= 0) {
        per.index.push(k);
        per.value.push(row.value[q]);
      }
      const how = shown[j];
      if (how) sensList.push({ parameter: how.name, unit: how.unit, value: (row.value[q] * how.factor) / scale });
    }
    bySource.push(per);
    const spread = spreadOf(sources, per);
    const supplyPercentPerVolt: Record<string, number> = nameTable();
    for (const s of supplies) supplyPercentPerVolt[s.name] = (derivativeOf(sens, o, s.j) / scale) * 100;
    sensList.sort((a, b) => rankOf(b.value) - rankOf(a.value));
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
      sensitivities: sensList.slice(0, 10),
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

/** Worst case, σ and the contributors ranked by variance, summed within each group, for one output's derivatives with respect to its sources. */
export function spreadOf(sources: readonly ToleranceSource[], per: SourceRow, sigmaOverride?: (k: number) => number): { sigma: number; worstCase: number; contributors: Contribution[] } {
  const groups = new Map<string, { variance: number; worst: number; aspect?: string; members: { name: string; variance: number }[] }>();
  let variance = 0;
  let worstCase = 0;
  per.index.forEach((k, q) => {
    const s = sources[k];
    const sigma = sigmaOverride ? sigmaOverride(k) : s.sigma;
    const bound = sigmaOverride ? (s.bound / s.sigma) * sigma : s.bound;
    const a = Math.abs(per.value[q] * sigma);
    const w = Math.abs(per.value[q] * bound);
    variance += a * a;
    worstCase += w;
    let g = groups.get(s.group);
    if (!g) groups.set(s.group, (g = { variance: 0, worst: 0, aspect: s.aspect, members: [] }));
    g.variance += a * a;
    g.worst += w;
    g.members.push({ name: s.element, variance: a * a });
  });
  const contributors: Contribution[] = [];
  for (const [group, g] of groups) {
    if (!(g.variance > 0)) continue;
    // A mismatch group is named by the devices that carry at least 1 % of its variance (`Q1/Q2 VBE`).
    const name = g.aspect
      ? `${g.members.filter((m) => m.variance >= 0.01 * g.variance).map((m) => m.name).join('/')} ${g.aspect}`
      : group;
    contributors.push({ name, share: variance > 0 ? g.variance / variance : 0, sigma: Math.sqrt(g.variance), worstCase: g.worst });
  }
  contributors.sort((a, b) => rankOf(b.share) - rankOf(a.share) || (a.name < b.name ? -1 : 1));
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


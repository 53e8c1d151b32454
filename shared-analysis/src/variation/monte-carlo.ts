// Monte Carlo: seeded re-solves drawing every tolerance and mismatch at once, the check on the linear figures (docs/VARIATION.md).

import { float64Column } from '../columns';
import type { Circuit } from '../circuit';
import { solvedCurrent } from '../checks/targets';
import type { DcSolveResult, DcSolver } from '../solve/dc';
import type { OperatingPoint } from '../solve/types';
import { measureStructure } from '../structures/measure';
import { topologyOf } from '../structures/topology';
import type { Structure } from '../structures/types';
import { structureVoltages } from '../structures/voltages';
import type { VariationDetail } from './index';
import type { MonteCarloFigures } from './types';
import { nameTable } from '../names';

declare const performance: { now(): number };

export interface MonteCarloOptions {
  runs: number;
  seed: number;
  /** Index of the first run (default 0): run r always draws the same numbers for a seed, so runs done in chunks equal runs done at once. */
  first?: number;
  /** Histogram bins per output (default 20). */
  bins?: number;
  /** Called after every run (for progress). */
  onProgress?: (done: number, total: number) => void;
  /** Polled before every run; true stops the run early (the figures cover the runs done). */
  cancelled?: () => boolean;
}

export interface MonteCarloResult {
  runs: number;
  converged: number;
  seed: number;
  ms: number;
  cancelled: boolean;
  /** Per output of the detail (same order); undefined for an output no run was counted for (no statistics exist). */
  figures: (MonteCarloFigures | undefined)[];
  /** Per output, the value of every counted run (for tests and plots). */
  samples: Float64Array[];
}

/** Seeded 32-bit generator (mulberry32, public domain; common practice for reproducible simulation): uniform in [0, 1). */
export function uniformSource(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal draws by the Box–Muller transform (G. E. P. Box and M. E. Muller, Ann. Math. Stat. 29, 1958). */
export function normalSource(seed: number): () => number {
  const u = uniformSource(seed);
  let spare: number | undefined;
  return () => {
    if (spare !== undefined) {
      const s = spare;
      spare = undefined;
      return s;
    }
    let u1 = u();
    while (u1 <= 0) u1 = u();
    const r = Math.sqrt(-2 * Math.log(u1));
    const th = 2 * Math.PI * u();
    spare = r * Math.sin(th);
    return r * Math.cos(th);
  };
}

/** The seed of run r: seed and run index mixed (a 32-bit integer hash, common practice), so every run has its own stream. */
export function runSeed(seed: number, r: number): number {
  let h = (seed ^ Math.imul(r + 1, 0x9e3779b1)) >>> 0;
  h = Math.imul(h ^ (h >>> 16), 0x85ebca6b) >>> 0;
  h = Math.imul(h ^ (h >>> 13), 0xc2b2ae35) >>> 0;
  return (h ^ (h >>> 16)) >>> 0;
}

/** Reads every output of the detail off an operating point with the structures' own measurements (not the adjoint functionals). */
function reader(circuit: Circuit, structures: Structure[], detail: VariationDetail): (op: OperatingPoint, out: Float64Array) => void {
  const byId = new Map(structures.map((s) => [s.id, s]));
  const topo = topologyOf(circuit);
  return (op, out) => {
    const measured = new Map<string, ReturnType<typeof measureStructure>>();
    const voltages = new Map<string, Record<string, number> | undefined>();
    detail.specs.forEach((spec, o) => {
      const s = spec.structure ? byId.get(spec.structure) : undefined;
      if (spec.role === 'element' || !s) {
        out[o] = spec.element ? (solvedCurrent(op, spec.element) ?? NaN) : NaN;
        return;
      }
      if (spec.role === 'voltage') {
        if (!voltages.has(s.id)) voltages.set(s.id, structureVoltages(s, op));
        out[o] = voltages.get(s.id)?.[spec.label] ?? NaN;
        return;
      }
      let m = measured.get(s.id);
      if (!m) measured.set(s.id, (m = measureStructure(circuit, op, s, topo)));
      out[o] = spec.role === 'iref' ? m.iref : (m.iout[spec.label] ?? NaN);
    });
  };
}

/**
 * N re-solves, each drawing every source of spread from its normal distribution (resistors and
 * sources additively, IS log-normally so it stays positive, VTO additively, BF and KP additively),
 * warm-started from the nominal solution on the prepared solver (same matrix pattern and symbolic
 * factorisation). The same seed gives the same numbers.
 */
export function runMonteCarlo(circuit: Circuit, structures: Structure[], solver: DcSolver, nominal: DcSolveResult, detail: VariationDetail, options: MonteCarloOptions): MonteCarloResult {
  const t0 = performance.now();
  const runs = Math.max(0, Math.floor(options.runs));
  const read = reader(circuit, structures, detail);
  const n = detail.specs.length;
  const values = float64Column(n);
  const samples: number[][] = detail.specs.map(() => []);
  const els = circuit.elements;
  let converged = 0;
  let cancelled = false;
  let done = 0;
  const first = Math.max(0, Math.floor(options.first ?? 0));
  for (let r = first; r < first + runs; r++) {
    if (options.cancelled?.()) {
      cancelled = true;
      break;
    }
    const draw = normalSource(runSeed(options.seed, r));
    const resistances: Record<string, number> = nameTable();
    const sourceValues: Record<string, number> = nameTable();
    const deviceParameters: Record<string, Record<string, number>> = nameTable();
    for (const s of detail.sources) {
      const z = draw();
      const p = s.parameter;
      if (p.kind === 'resistance') resistances[els[p.element].name] = s.nominal + z * s.sigma;
      else if (p.kind === 'source') sourceValues[els[p.element].name] = s.nominal + Math.sign(s.nominal) * z * s.sigma;
      else if (p.kind === 'model') {
        const name = els[p.element].name;
        const set = (deviceParameters[name] ??= {});
        // Sources on one parameter add up (a JFET's VTO spreads from part to part and mismatches its partner).
        const drawn = set[p.param] ?? s.nominal;
        set[p.param] = p.param === 'IS' ? drawn * Math.exp((z * s.sigma) / s.nominal) : drawn + z * s.sigma;
      }
    }
    const res = solver.solve({ temperatureC: nominal.op.temperatureC, initialGuess: nominal.x, resistances, sourceValues, deviceParameters });
    done++;
    if (res.op.converged) {
      read(res.op, values);
      let ok = true;
      for (let o = 0; o < n; o++) if (!Number.isFinite(values[o])) ok = false;
      if (ok) {
        converged++;
        for (let o = 0; o < n; o++) samples[o].push(values[o]);
      }
    }
    options.onProgress?.(done, runs);
  }
  const bins = Math.max(1, Math.floor(options.bins ?? 20));
  const figures = detail.specs.map((_, o) => monteCarloFigures(samples[o], bins, detail.result.outputs[o].target, done));
  return { runs: done, converged, seed: options.seed, ms: performance.now() - t0, cancelled, figures, samples: samples.map((s) => Float64Array.from(s)) };
}

/**
 * Mean, sample σ, range, histogram and target yield of one output's Monte Carlo values; undefined when no run was
 * counted (every run failed to converge or read a non-finite value): there is no mean or range to state, and the
 * run summary's `converged: 0` says why.
 */
export function monteCarloFigures(xs: ArrayLike<number>, bins: number, target: { current: number; tolerance: number } | undefined, runs: number): MonteCarloFigures | undefined {
  const k = xs.length;
  if (k === 0) return undefined;
  let mean = 0;
  for (let i = 0; i < k; i++) mean += xs[i];
  mean /= k;
  let ss = 0;
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < k; i++) {
    const x = xs[i];
    ss += (x - mean) * (x - mean);
    if (x < min) min = x;
    if (x > max) max = x;
  }
  const sigma = k > 1 ? Math.sqrt(ss / (k - 1)) : 0;
  const histogram = new Array<number>(bins).fill(0);
  const width = max > min ? (max - min) / bins : 0;
  for (let i = 0; i < k; i++) histogram[width > 0 ? Math.min(bins - 1, Math.floor((xs[i] - min) / width)) : 0]++;
  const out: MonteCarloFigures = { runs, converged: k, mean, sigma, min, max, histogram };
  if (target) {
    const lo = target.current * (1 - target.tolerance);
    const hi = target.current * (1 + target.tolerance);
    let inside = 0;
    for (let i = 0; i < k; i++) if (Math.abs(xs[i]) >= lo && Math.abs(xs[i]) <= hi) inside++;
    out.yield = inside / k;
  }
  return out;
}

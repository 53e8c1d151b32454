// Monte Carlo as the check on the linear spread: reproducible with a fixed seed, and its σ within sampling error of the root-sum-square σ on a near-linear circuit.

import { describe, expect, it } from 'vitest';
import { analyseSession, monteCarloOf } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { monteCarloFigures, normalSource } from '../../shared-analysis/src/variation/monte-carlo';

const MIRROR = `near-linear mirror
VCC vcc 0 10 ; tol 1%
RREF vcc ref 9.1k ; tol 1%
Q1 ref ref 0 qn
Q2 out ref 0 qn ; expect 1mA ±5%
RL vcc out 2k
.model qn npn(IS=1e-15 BF=200 MATCHVBE=1m)
.end
`;

const session = () => analyseSession({ uri: 'mem://mc.cir', text: MIRROR }, new MemoryWorkspace({}), { corners: { enabled: false } });

describe('Monte Carlo', () => {
  it('reproduces its own numbers exactly with the same seed, and differs with another', () => {
    const a = monteCarloOf(session(), { runs: 200, seed: 7 })!;
    const b = monteCarloOf(session(), { runs: 200, seed: 7 })!;
    const c = monteCarloOf(session(), { runs: 200, seed: 8 })!;
    expect(a.converged).toBe(200);
    expect(Array.from(a.samples[1])).toEqual(Array.from(b.samples[1]));
    expect(a.figures).toEqual(b.figures);
    expect(Array.from(c.samples[1])).not.toEqual(Array.from(a.samples[1]));
  });

  it('gives the same runs in chunks as at once (each run is seeded by its index)', () => {
    const whole = monteCarloOf(session(), { runs: 60, seed: 11 })!;
    const a = monteCarloOf(session(), { runs: 25, seed: 11 })!;
    const b = monteCarloOf(session(), { runs: 35, seed: 11, first: 25 })!;
    expect([...Array.from(a.samples[1]), ...Array.from(b.samples[1])]).toEqual(Array.from(whole.samples[1]));
  });

  it('agrees with the linear σ within sampling error', () => {
    const s = session();
    const r = monteCarloOf(s, { runs: 3000, seed: 12345 })!;
    const outputs = s.analysis.variation!.outputs;
    for (let o = 0; o < outputs.length; o++) {
      const linear = outputs[o].sigma;
      const mc = r.figures[o]!.sigma;
      // The sample σ of N normal draws has a relative standard error of about 1/√(2(N − 1)) (common statistics):
      // 1.3 % at N = 3000; allow four of them plus 1 % for the curvature the linear figure leaves out.
      const se = 1 / Math.sqrt(2 * (r.converged - 1));
      expect(Math.abs(mc - linear) / linear, `${outputs[o].key}: Monte Carlo σ ${mc}, linear σ ${linear}`).toBeLessThan(4 * se + 0.01);
      // The mean sits on the nominal within a few standard errors of the mean.
      expect(Math.abs(r.figures[o]!.mean - outputs[o].nominal)).toBeLessThan(4 * (linear / Math.sqrt(r.converged)) + 0.002 * Math.abs(outputs[o].nominal));
      expect(r.figures[o]!.histogram.reduce((a, b) => a + b, 0)).toBe(r.converged);
    }
    // The target's Monte Carlo yield is reported beside the predicted one.
    const q2 = outputs.find((o) => o.element === 'Q2' && o.target)!;
    expect(q2.monteCarlo?.yield).toBeDefined();
    expect(Math.abs(q2.monteCarlo!.yield! - q2.target!.yield)).toBeLessThan(0.03);
  });

  it('states no mean, σ or range for an output no run was counted for, and leaves no NaN behind', () => {
    const s = session();
    // A first call counts every run: the outputs carry figures.
    monteCarloOf(s, { runs: 10, seed: 5 });
    expect(s.analysis.variation!.outputs.every((o) => o.monteCarlo !== undefined)).toBe(true);
    // Then every run fails to converge (the solver's verdict replaced; the solve itself still runs): no statistics exist.
    const solve = s.solver!.solve.bind(s.solver!);
    s.solver!.solve = (options) => {
      const r = solve(options);
      return { ...r, op: Object.assign(Object.create(r.op) as typeof r.op, { converged: false }) };
    };
    const r = monteCarloOf(s, { runs: 20, seed: 5 })!;
    expect(r.runs).toBe(20);
    expect(r.converged).toBe(0);
    expect(r.figures.every((f) => f === undefined)).toBe(true);
    expect(s.analysis.variation!.monteCarlo).toMatchObject({ runs: 20, converged: 0 });
    // The figures of the earlier call do not stay beside a summary that says no run was counted.
    expect(s.analysis.variation!.outputs.some((o) => o.monteCarlo !== undefined)).toBe(false);
    // JSON writes NaN as null; the reliability rule is that no number is ever written as null.
    expect(JSON.stringify(s.analysis.variation)).not.toContain('null');
  });

  it('gives one counted run its own value as mean and range, σ 0, one histogram count', () => {
    // Direct arithmetic: the mean and the extremes of one number are that number; the sample σ needs two.
    expect(monteCarloFigures([], 20, undefined, 7)).toBeUndefined();
    const one = monteCarloFigures([1.5e-3], 4, { current: 1e-3, tolerance: 0.1 }, 7)!;
    expect(one).toMatchObject({ runs: 7, converged: 1, mean: 1.5e-3, sigma: 0, min: 1.5e-3, max: 1.5e-3, yield: 0 });
    expect(one.histogram).toEqual([1, 0, 0, 0]);
  });

  it('draws standard normal numbers (mean 0, variance 1)', () => {
    const d = normalSource(3);
    let m = 0;
    let v = 0;
    const n = 20000;
    const xs: number[] = [];
    for (let k = 0; k < n; k++) xs.push(d());
    for (const x of xs) m += x / n;
    for (const x of xs) v += ((x - m) * (x - m)) / (n - 1);
    expect(Math.abs(m)).toBeLessThan(4 / Math.sqrt(n));
    expect(Math.abs(v - 1)).toBeLessThan(4 * Math.sqrt(2 / n));
  });

  it('stops when cancelled and reports progress', () => {
    let seen = 0;
    const r = monteCarloOf(session(), { runs: 100, seed: 1, onProgress: (d) => (seen = d), cancelled: () => seen >= 10 })!;
    expect(r.runs).toBe(10);
    expect(r.cancelled).toBe(true);
  });
});

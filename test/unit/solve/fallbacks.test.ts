// Newton fallbacks (gmin stepping, source stepping) and the no-convergence finding.

import { describe, expect, it } from 'vitest';
import { solveOperatingPoint } from '../../../shared-analysis/src/solve/dc';
import type { DiodeRecord, MosRecord } from '../../../shared-analysis/src/solve/types';
import type { Spec } from './build';
import { circuit, model } from './build';

/** A chain of NMOS source followers, each loaded by a 10 µA sink, below a diode-connected bias device. */
function followerChain(stages: number): Spec[] {
  const n = model('NF', 'nmos', { KP: 1e-4, VTO: 0.7, LAMBDA: 0.01 });
  const s: Spec[] = [
    ['V', 'VDD', 'vdd', '0', 5],
    ['I', 'I0', 'vdd', 's0', 1e-3],
    ['M', 'M0', 's0', 's0', '0', '0', n],
  ];
  for (let i = 1; i < stages; i++) s.push(['M', `M${i}`, 'vdd', `s${i - 1}`, `s${i}`, '0', n], ['I', `I${i}`, `s${i}`, '0', 1e-5]);
  return s;
}

/** A string of `count` diodes across a source through a 1 Ω resistor. */
function diodeString(count: number, volts: number): Spec[] {
  const d = model('DS', 'd', { IS: 1e-14 });
  const s: Spec[] = [
    ['V', 'V1', 'top', '0', volts],
    ['R', 'R1', 'top', 'n0', 1],
  ];
  for (let i = 0; i < count; i++) s.push(['D', `D${i}`, `n${i}`, i === count - 1 ? '0' : `n${i + 1}`, d]);
  return s;
}

/** Solves and checks the fallbacks recorded and convergence. */
function check(specs: Spec[], expected: { fallbacks: string[]; converged: boolean }, maxIterations?: number) {
  const r = solveOperatingPoint(circuit(specs), { maxIterations });
  expect(r.op.fallbacks).toEqual(expected.fallbacks);
  expect(r.op.converged).toBe(expected.converged);
  return r;
}

describe('fallbacks', () => {
  it('a 20-stage source-follower chain defeats plain Newton; gmin stepping solves it', () => {
    const r = check(followerChain(20), { fallbacks: ['gmin-stepping'], converged: true });
    for (let i = 1; i < 20; i++) {
      const m = r.op.devices[`M${i}`] as MosRecord;
      expect(m.region).toBe('saturation');
      // Source: Shichman–Hodges saturation law (DESIGN.md): ID = β/2·VOV²·(1 + λVDS) with β = KP·W/L = 1e-3 A/V².
      // The reported drain current includes the solver's 1e-12 S channel conductance (common practice), so it is taken out here.
      const channel = 1e-5 - 1e-12 * m.vds;
      const vov = Math.sqrt((2 * channel) / (1e-3 * (1 + 0.01 * m.vds)));
      expect(m.vgs).toBeCloseTo(0.7 + vov, 9);
      expect(m.id).toBeCloseTo(1e-5, 12);
    }
  });

  it('a 40-diode string under a 10-iteration cap needs the fallbacks and lands on the same point as an uncapped solve', () => {
    const free = check(diodeString(40, 40), { fallbacks: [], converged: true });
    expect(free.op.iterations).toBeGreaterThan(10);
    const capped = check(diodeString(40, 40), { fallbacks: ['gmin-stepping', 'source-stepping'], converged: true }, 10);
    const a = (free.op.devices.D0 as DiodeRecord).id;
    const b = (capped.op.devices.D0 as DiodeRecord).id;
    expect(Math.abs(a - b) / a).toBeLessThan(1e-9);
    // Source: KCL — the series string carries one current; (V − 40·VD)/1 Ω equals it.
    expect(Math.abs(40 - capped.op.nodes.n0 - b) / b).toBeLessThan(1e-9);
  });

  it('when nothing converges the finding names the unsettled nodes, the devices and the fallbacks tried', () => {
    const q = model('QM', 'npn', { IS: 1e-15 });
    const r = check(
      [
        ['V', 'VCC', 'vcc', '0', 5],
        ['R', 'RREF', 'vcc', 'ref', 4300],
        ['Q', 'Q1', 'ref', 'ref', '0', q],
        ['Q', 'Q2', 'out', 'ref', '0', q],
        ['R', 'RL', 'vcc', 'out', 1000],
      ],
      { fallbacks: ['gmin-stepping', 'source-stepping'], converged: false },
      1,
    );
    const f = r.findings.find((x) => x.code === 'dc-no-convergence')!;
    expect(f).toBeDefined();
    expect(f.message).toMatch(/gmin-stepping, then source-stepping/);
    expect(f.message).toMatch(/ref/);
    expect(f.message).toMatch(/Q1/);
    expect(f.span).toEqual({ start: 200, end: 250 });
    expect(Object.values(r.op.nodes).every(Number.isFinite)).toBe(true);
  });
});

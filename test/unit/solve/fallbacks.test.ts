// Newton fallbacks (gmin stepping, source stepping) and the no-convergence finding.

import { describe, expect, it } from 'vitest';
import { DcSolver, solveOperatingPoint } from '../../../shared-analysis/src/solve/dc';
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

/** Bipolar and MOS devices wired into a positive-feedback loop, every node also tied to ground through 1 MΩ. */
function tangle(): Spec[] {
  const q = model('QN', 'npn', { IS: 1e-15, BF: 200, VAF: 50 });
  const qp = model('QP', 'pnp', { IS: 1e-15, BF: 100, VAF: 50 });
  const p = model('MP', 'pmos', { KP: 4e-5, VTO: -0.7, LAMBDA: 0.02 });
  const d = model('DN', 'd', { IS: 1e-14 });
  const s: Spec[] = [
    ['V', 'VCC', 'vcc', '0', 10.95],
    ['Q', 'Q0', 'a', 'c', 'vcc', q],
    ['R', 'R1', 'vcc', 'b', 858e3],
    ['R', 'R2', 'a', 'd', 787e3],
    ['R', 'R3', 'e', 'b', 189e3],
    ['R', 'R4', 'c', 'e', 12.7e3],
    ['D', 'D5', 'd', 'a', d],
    ['R', 'R6', 'e', '0', 330],
    ['Q', 'Q7', 'c', 'b', 'd', qp],
    ['M', 'M8', 'b', 'c', 'c', '0', p],
  ];
  for (const n of ['a', 'b', 'c', 'd', 'e', 'vcc']) s.push(['R', `RG${n}`, n, '0', 1e6]);
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
function check(specs: Spec[], expected: { fallbacks: string[]; converged: boolean }, maxIterations?: number, fromZero = false) {
  const c = circuit(specs);
  // An explicit all-zero guess is used as given, without the cold-start junction bias.
  const initialGuess = fromZero ? new Float64Array(new DcSolver(c).unknownCount) : undefined;
  const r = solveOperatingPoint(c, { maxIterations, initialGuess });
  expect(r.op.fallbacks).toEqual(expected.fallbacks);
  expect(r.op.converged).toBe(expected.converged);
  return r;
}

describe('fallbacks', () => {
  it('a tangle of bipolar and MOS devices in a positive-feedback loop defeats plain Newton; gmin stepping solves it', () => {
    // Found by a seeded random search over transistor circuits; values rounded.
    const specs = tangle();
    const r = check(specs, { fallbacks: ['gmin-stepping'], converged: true });
    // Source: Kirchhoff's current law — the currents of every element at each node sum to zero.
    const c = circuit(specs);
    const net = new Map<number, { sum: number; scale: number }>();
    const add = (node: number, i: number): void => {
      const e = net.get(node) ?? { sum: 0, scale: 0 };
      e.sum += i;
      e.scale += Math.abs(i);
      net.set(node, e);
    };
    for (const el of c.elements) {
      const rec = r.op.devices[el.name] as unknown as Record<string, number>;
      if (el.kind === 'Q') {
        add(el.nodes[0], rec.ic);
        add(el.nodes[1], rec.ib);
        add(el.nodes[2], rec.ie);
      } else if (el.kind === 'M') {
        add(el.nodes[0], rec.id);
        add(el.nodes[2], -rec.id);
      } else {
        const i = el.kind === 'D' ? rec.id : rec.current;
        add(el.nodes[0], i);
        add(el.nodes[1], -i);
      }
    }
    for (const [node, e] of net) if (node !== 0) expect(Math.abs(e.sum), `node ${c.nodes[node]}`).toBeLessThanOrEqual(1e-9 * e.scale + 1e-15);
    // A plain solve warm-started there converges at once: it is a solution of the unmodified circuit.
    const warm = solveOperatingPoint(c, { initialGuess: r.x });
    expect(warm.op.fallbacks).toEqual([]);
    expect(warm.op.iterations).toBe(1);
  });

  it('a 20-stage source-follower chain converges with plain Newton thanks to gate and channel limiting', () => {
    const r = check(followerChain(20), { fallbacks: [], converged: true });
    expect(r.op.iterations).toBeLessThan(60);
    for (let i = 1; i < 20; i++) {
      const m = r.op.devices[`M${i}`] as MosRecord;
      expect(m.region).toBe('saturation');
      // Source: Shichman–Hodges saturation law (docs/DEVICE-MODELS.md): ID = β/2·VOV²·(1 + λVDS) with β = KP·W/L = 1e-3 A/V².
      // The reported drain current includes the solver's 1e-12 S channel conductance (common practice), so it is taken out here.
      const channel = 1e-5 - 1e-12 * m.vds;
      const vov = Math.sqrt((2 * channel) / (1e-3 * (1 + 0.01 * m.vds)));
      expect(m.vgs).toBeCloseTo(0.7 + vov, 9);
      expect(m.id).toBeCloseTo(1e-5, 12);
    }
  });

  it('a 40-diode string started from 0 V under a 10-iteration cap needs the fallbacks and lands on the same point as an uncapped solve', () => {
    const free = check(diodeString(40, 40), { fallbacks: [], converged: true }, undefined, true);
    expect(free.op.iterations).toBeGreaterThan(10);
    const capped = check(diodeString(40, 40), { fallbacks: ['gmin-stepping', 'source-stepping'], converged: true }, 10, true);
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

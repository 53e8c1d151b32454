// The device tables' stamps against an independent finite-difference Jacobian, and each kind's descriptor against the records it builds.

import { describe, expect, it } from 'vitest';
import type { DeviceConditions, LoadTally } from '../../../shared-analysis/src/devices/device';
import { thermalVoltage } from '../../../shared-analysis/src/devices/physics';
import { DEVICE_KINDS } from '../../../shared-analysis/src/devices/registry';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import { MnaLayout } from '../../../shared-analysis/src/solve/mna';
import { rng } from '../../seeded-random';
import type { Spec } from './build';
import { circuit, model } from './build';
import { node, type BehaviourProgram } from '../../../shared-analysis/src/devices/behaviour-program';

const QN = model('QN', 'npn', { IS: 1e-15, BF: 120, VAF: 60, VAR: 8, IKF: 2e-3, IKR: 1e-3, ISE: 1e-14, NE: 1.6, ISC: 1e-14, NC: 1.9 });
const QP = model('QP', 'pnp', { IS: 2e-15, BF: 80, BR: 2 });
const NM = model('NM', 'nmos', { KP: 1e-4, VTO: 0.6, LAMBDA: 0.03, GAMMA: 0.4 });
const PM = model('PM', 'pmos', { KP: 5e-5, VTO: -0.7, LAMBDA: 0.02, GAMMA: 0.3 });
const DD = model('DD', 'd', { IS: 1e-14, N: 1.5 });
/** A breakdown voltage inside the test points' range, so the breakdown term's stamp is exercised. */
const DZ = model('DZ', 'd', { IS: 1e-14, BV: 0.3, IBV: 1e-4, NBV: 1.5 });
/** JFETs with gate junctions that the test points bias forward and reverse. */
const JN = model('JN', 'njf', { VTO: -0.5, BETA: 1e-3, LAMBDA: 0.02, IS: 1e-14 });
/** A switch whose transition band the test points reach. */
const SW = model('SW', 'sw', { RON: 100, ROFF: 1e5, VT: 0.2, VH: 0.5 });
const CW = model('CW', 'csw', { RON: 50, ROFF: 1e6, IT: 1e-3, IH: 1e-4 });
/** A behavioural current 1e-4·V(a,e)·V(b) + 2e-4·exp(V(g)/2), built from its program nodes. */
const BP: BehaviourProgram = (() => {
  const span = { start: 0, end: 1 };
  const mk = (n: Record<string, unknown>) => node({ ...n, span, text: 'f' } as never, 3);
  const input = (index: number) => mk({ op: 'input', index });
  const product = mk({ op: 'mul', a: mk({ op: 'mul', a: mk({ op: 'const', value: 1e-4 }), b: input(0) }), b: input(1) });
  const growth = mk({ op: 'mul', a: mk({ op: 'const', value: 2e-4 }), b: mk({ op: 'call', name: 'exp', args: [mk({ op: 'div', a: input(2), b: mk({ op: 'const', value: 2 }) })] }) });
  return { root: mk({ op: 'add', a: product, b: growth }), inputs: 3 };
})();
const JP = model('JP', 'pjf', { VTO: -0.4, BETA: 5e-4, LAMBDA: 0.01, IS: 1e-14, N: 1.2 });

/** Devices of every kind and polarity on shared nodes (no series resistances, so every row is a netlist node). */
const MIXED: Spec[] = [
  ['V', 'VCC', 'vcc', '0', 5],
  ['R', 'R1', 'vcc', 'a', 10e3],
  ['Q', 'Q1', 'a', 'b', 'e', QN, { area: 2 }],
  ['Q', 'Q2', 'e', 'b', 'a', QP, { m: 2 }],
  ['M', 'M1', 'a', 'vcc', 'e', 'sub', NM, { w: 20e-6, l: 2e-6 }],
  ['M', 'M2', 'g', 'b', 'a', 'vcc', PM],
  ['M', 'M3', 'b', 'g', 'a', 'sub', NM],
  ['D', 'D1', 'b', 'e', DD],
  ['D', 'D2', 'e', 'g', DZ, { area: 3 }],
  ['J', 'J1', 'a', 'b', 'e', JN],
  ['J', 'J2', 'g', 'e', 'b', JP, { area: 2 }],
  ['S', 'S1', 'a', 'g', 'b', 'e', SW],
  ['W', 'W1', 'sub', 'e', 'VCC', CW],
  ['B', 'B1', 'g', 'sub', 'I', BP, [['a', 'e'], ['b', '0'], ['g', '0']]],
  ['R', 'R2', 'e', '0', 1e3],
  ['R', 'R3', 'g', '0', 47e3],
  ['R', 'R4', 'b', '0', 22e3],
  ['R', 'R5', 'sub', '0', 1e6],
];

const CONDITIONS: DeviceConditions = { temperatureC: 27, tnomC: 27, vt: thermalVoltage(27), betaScale: 1, junctionGmin: 1e-12 };

/**
 * The device part of the assembled system at x: J (dense, n×n) and the current every device
 * terminal row receives, J·x − rhs (the stamps promise that this equals the sum of the device
 * currents into the terminals on that row).
 */
function assemble(layout: MnaLayout, x: Float64Array): { jac: Float64Array; rowCurrent: Float64Array } {
  const n = layout.size;
  const values = new Float64Array(layout.pattern.rows.length);
  const rhs = new Float64Array(n);
  const tally: LoadTally = { limited: false, nonFinite: [] };
  for (const t of layout.tables) {
    t.prepare(CONDITIONS);
    t.resetState(x);
    t.load(x, values, rhs, false, tally);
  }
  expect(tally.nonFinite).toEqual([]);
  const jac = new Float64Array(n * n);
  for (let e = 0; e < values.length; e++) jac[layout.pattern.rows[e] * n + layout.pattern.cols[e]] += values[e];
  const rowCurrent = new Float64Array(n);
  for (let r = 0; r < n; r++) {
    let s = -rhs[r];
    for (let c = 0; c < n; c++) s += jac[r * n + c] * x[c];
    rowCurrent[r] = s;
  }
  return { jac, rowCurrent };
}

/** Sum of the device currents into each unknown's node at x, from the tables' solved columns and the descriptors' terminal currents. */
function deviceCurrents(layout: MnaLayout, x: Float64Array): Float64Array {
  const out = new Float64Array(layout.size);
  for (const t of layout.tables) {
    const cols = t.evaluate(x);
    const nt = t.kind.terminalCount;
    for (let i = 0; i < t.instances.count; i++) {
      const el = t.instances.elements[i];
      for (let k = 0; k < t.kind.nodeCount; k++) {
        const unknown = el.nodes[k] - 1;
        if (unknown >= 0) out[unknown] += t.kind.terminalCurrent(cols, i, k);
      }
      expect(t.instances.terminals.length).toBe(t.instances.count * nt);
    }
  }
  return out;
}

describe('device tables', () => {
  const c = circuit(MIXED);
  const layout = new MnaLayout(c);
  const random = rng(11);
  const points = Array.from({ length: 6 }, () => Float64Array.from({ length: layout.size }, (_, k) => (k === 0 ? 5 : 0.2 + 0.8 * random())));

  it('stamp currents that agree with the equations at the linearisation point', () => {
    for (const x of points) {
      const { rowCurrent } = assemble(layout, x);
      const currents = deviceCurrents(layout, x);
      for (let r = 0; r < layout.size - 1; r++) {
        // Source: the companion model's definition (a Newton linearisation reproduces the device current at the point it was taken: J·x − rhs = I(x)).
        expect(Math.abs(rowCurrent[r] - currents[r])).toBeLessThanOrEqual(1e-9 * Math.max(Math.abs(currents[r]), 1e-6));
      }
    }
  });

  it('stamp a Jacobian equal to the central finite difference of the device currents', () => {
    // Source: central differences, error O(h²) (common practice); h = 1 µV keeps both truncation and rounding small against mA-level currents.
    const h = 1e-6;
    for (const x of points) {
      const { jac } = assemble(layout, x);
      const n = layout.size;
      for (let col = 0; col < n - 1; col++) {
        const up = Float64Array.from(x);
        const down = Float64Array.from(x);
        up[col] += h;
        down[col] -= h;
        const iu = deviceCurrents(layout, up);
        const id = deviceCurrents(layout, down);
        for (let r = 0; r < n - 1; r++) {
          const fd = (iu[r] - id[r]) / (2 * h);
          const scale = Math.max(1e-6, Math.abs(fd), Math.abs(jac[r * n + col]));
          expect(Math.abs(jac[r * n + col] - fd) / scale).toBeLessThan(1e-4);
        }
      }
    }
  });

  it('builds records whose numeric keys are the kind’s quantities, in order', () => {
    // A line's rows are branch equations, not currents, so it joins the circuit only here.
    const withLine = circuit([...MIXED, ['T', 'T1', 'g', '0', 'far', '0'], ['R', 'R6', 'far', '0', 100e3]]);
    const op = new DcSolver(withLine).solve().op;
    expect(op.converged).toBe(true);
    for (const kind of DEVICE_KINDS) {
      const names = withLine.elements.filter((e) => e.kind === kind.letter).map((e) => e.name);
      expect(names.length).toBeGreaterThan(0);
      for (const name of names) {
        const rec = op.devices[name] as unknown as Record<string, unknown>;
        expect(Object.keys(rec).filter((k) => typeof rec[k] === 'number')).toEqual([...kind.quantities]);
        // Two-terminal records (a behavioural source's, a line's) carry no region.
        if (rec.type !== 'controlled-source' && rec.type !== 'transmission-line') expect(kind.regions).toContain(rec.region);
      }
    }
  });

  it('wires a diode without series resistance to its anode, and one with it to an internal node', () => {
    const withRs = model('DR', 'd', { IS: 1e-14, RS: 10 });
    const l = new MnaLayout(circuit([['V', 'V1', 'a', '0', 1], ['D', 'D1', 'a', '0', DD], ['D', 'D2', 'a', '0', withRs]]));
    const t = l.tables[0].instances.terminals;
    expect(Array.from(t.slice(0, 3))).toEqual([0, 0, -1]);
    expect(t[4]).toBe(l.unknowns.findIndex((u) => u.kind === 'internal'));
    expect(l.describeUnknown(t[4])).toBe('D2 internal anode');
  });
});

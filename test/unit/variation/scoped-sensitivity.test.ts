// Adjoint sensitivities with the device derivatives and the columns ∂F/∂p made only for a scope of elements (what the
// spread analysis after a value edit asks for: the parts the derived outputs reach, and the sources holding rails).
// The check: on an invented circuit of parts joined only through two rails, each output's derivatives over its own
// part's scope equal the whole circuit's computation (the independent path, run over every element) value for value,
// and only the scope's devices were derived; a scope that misses part of an output's reach (its own device, or the
// elements on a node its adjoint reaches) gives the whole computation's figures too, because the derivation falls back
// to the whole circuit. Taking out the check on the adjoint's rows fails it.

import { describe, expect, it } from 'vitest';
import type { Circuit, Element } from '../../../shared-analysis/src/circuit';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import { sensitivities, type OutputFunctional, type SensitivityResult, type VariedParameter } from '../../../shared-analysis/src/variation/sensitivity';
import { CircuitBuilder } from '../structures/build';

// Invented: a 5 V and a 3 V rail. Part "cell": an NPN sink (reference resistor with a temperature coefficient, diode-
// connected reference, output, load). Part "mos": an NMOS mirror fed from the 3 V rail. Part "diodes": two diodes in
// series under a resistor. Part "jfet": an N-channel JFET with a source resistor. "RX" sits between the rails alone.
function circuit(): Circuit {
  const c = new CircuitBuilder()
    .v('VA', 'va', '0', 5)
    .v('VB', 'vb', '0', 3)
    .model('qn', 'npn', { IS: 2e-15, BF: 110, VAF: 70 })
    .model('nm', 'nmos', { VTO: 0.6, KP: 1.2e-4, LAMBDA: 0.03 })
    .model('dn', 'd', { IS: 3e-14 })
    .model('jn', 'njf', { VTO: -1.8, BETA: 1.1e-3, LAMBDA: 0.02 })
    .r('RR', 'va', 'r', 4.3e3)
    .q('QR', 'r', 'r', '0', 'qn')
    .q('QO', 'o', 'r', '0', 'qn')
    .r('RL', 'va', 'o', 1.5e3)
    .r('RM', 'vb', 'g', 18e3)
    .mos('M1', 'g', 'g', '0', '0', 'nm', { w: 10e-6, l: 2e-6 })
    .mos('M2', 'm', 'g', '0', '0', 'nm', { w: 20e-6, l: 2e-6 })
    .r('RD', 'vb', 'm', 6.8e3)
    .r('RA', 'va', 'a', 3.9e3)
    .d('D1', 'a', 'k', 'dn')
    .d('D2', 'k', '0', 'dn')
    .jfet('J1', 'jd', '0', 'js', 'jn')
    .r('RJ', 'js', '0', 820)
    .r('RJD', 'vb', 'jd', 1e3)
    .r('RX', 'va', 'vb', 12e3)
    .build();
  const rr = c.elements.find((e) => e.name === 'RR') as Extract<Element, { kind: 'R' }>;
  rr.tc1 = 1.5e-3;
  return c;
}

/** The elements of each part, listed by hand from the netlist above (its nodes that are not rails join them). */
const PARTS: Record<string, string[]> = {
  cell: ['RR', 'QR', 'QO', 'RL'],
  mos: ['RM', 'M1', 'M2', 'RD'],
  diodes: ['RA', 'D1', 'D2'],
  jfet: ['J1', 'RJ', 'RJD'],
};
/** The rail each part hangs from. */
const RAIL_OF: Record<string, string> = { cell: 'VA', mos: 'VB', diodes: 'VA', jfet: 'VB' };
/** The sources holding the rails: their branch rows carry the supplies' derivatives. */
const RAIL_SOURCES = ['VA', 'VB'];

function scopeOf(c: Circuit, names: string[]): Uint8Array {
  const scope = new Uint8Array(c.elements.length);
  c.elements.forEach((e, i) => (scope[i] = names.includes(e.name) ? 1 : 0));
  return scope;
}

/** Every resistor and source value, the temperature and the devices' model parameters the spread varies. */
function parameters(c: Circuit): VariedParameter[] {
  const params: VariedParameter[] = [{ kind: 'temperature' }];
  c.elements.forEach((e, i) => {
    if (e.kind === 'R') params.push({ kind: 'resistance', element: i });
    if (e.kind === 'V') params.push({ kind: 'source', element: i });
    if (e.kind === 'Q') params.push({ kind: 'model', element: i, param: 'IS' }, { kind: 'model', element: i, param: 'BF' });
    if (e.kind === 'M') params.push({ kind: 'model', element: i, param: 'VTO' }, { kind: 'model', element: i, param: 'KP' });
    if (e.kind === 'J') params.push({ kind: 'model', element: i, param: 'VTO' }, { kind: 'model', element: i, param: 'BETA' });
  });
  return params;
}

/** One output per part, of every kind of term: a device's terminal current, a node voltage, a resistor's current. */
function outputs(c: Circuit): { part: string; output: OutputFunctional }[] {
  const at = (name: string) => c.elements.findIndex((e) => e.name === name);
  const node = (name: string) => c.nodes.indexOf(name);
  return [
    { part: 'cell', output: { terms: [{ kind: 'terminal', element: at('QO'), terminal: 0, weight: 1 }], magnitude: true } },
    { part: 'mos', output: { terms: [{ kind: 'node', node: node('m'), weight: 1 }, { kind: 'terminal', element: at('M1'), terminal: 0, weight: 0.5 }], magnitude: false } },
    { part: 'diodes', output: { terms: [{ kind: 'element', element: at('RA'), weight: 1 }], magnitude: true } },
    { part: 'jfet', output: { terms: [{ kind: 'terminal', element: at('J1'), terminal: 0, weight: 1 }, { kind: 'node', node: node('js'), weight: 1e-3 }], magnitude: true } },
  ];
}

function expectSameDerivatives(got: SensitivityResult, want: SensitivityResult): void {
  expect(Array.from(got.value)).toEqual(Array.from(want.value));
  expect(Array.from(got.rowStart)).toEqual(Array.from(want.rowStart));
  expect(Array.from(got.index)).toEqual(Array.from(want.index));
  expect(Array.from(got.derivative)).toEqual(Array.from(want.derivative));
}

describe('sensitivities over a scope of elements', () => {
  const c = circuit();
  const solver = new DcSolver(c);
  const nominal = solver.solve();
  const lin = solver.linearise(nominal)!;
  const params = parameters(c);
  const devices = c.elements.filter((e) => 'QMDJ'.includes(e.kind)).length;

  it('solves, and the whole computation derives every device', () => {
    expect(nominal.op.converged).toBe(true);
    expect(sensitivities(lin, outputs(c).map((o) => o.output), params).devicesDerived).toBe(devices);
  });

  for (const { part, output } of outputs(c)) {
    it(`equals the whole circuit's derivatives over the part's own scope: ${part}`, () => {
      const whole = sensitivities(lin, [output], params);
      const scoped = sensitivities(lin, [output], params, scopeOf(c, [...PARTS[part], ...RAIL_SOURCES]));
      expectSameDerivatives(scoped, whole);
      // Only the part's devices were derived.
      expect(scoped.devicesDerived).toBe(PARTS[part].filter((n) => 'QMDJ'.includes(n[0])).length);
      // The supply's and the temperature's derivatives are among them (the rail source's row, the devices' columns).
      const supply = params.findIndex((p) => p.kind === 'source' && c.elements[p.element].name === RAIL_OF[part]);
      expect(Array.from(scoped.index)).toEqual(expect.arrayContaining([0, supply]));
    });
  }

  it('equals them for several outputs of several parts at once', () => {
    const all = outputs(c);
    const scope = scopeOf(c, [...PARTS.cell, ...PARTS.jfet, ...RAIL_SOURCES]);
    const chosen = [all[0].output, all[3].output];
    const scoped = sensitivities(lin, chosen, params, scope);
    expectSameDerivatives(scoped, sensitivities(lin, chosen, params));
    expect(scoped.devicesDerived).toBe(3);
  });

  it('falls back to the whole circuit when the scope misses elements on a node the adjoint reaches', () => {
    // The output device alone: its base node's row holds RR's and QR's stamps, which were not derived.
    const output = outputs(c)[0].output;
    const scoped = sensitivities(lin, [output], params, scopeOf(c, ['QO', 'RL', ...RAIL_SOURCES]));
    expectSameDerivatives(scoped, sensitivities(lin, [output], params));
    expect(scoped.devicesDerived).toBe(devices);
  });

  it('falls back when the output reads a device out of the scope (its adjoint sits on the device’s rows)', () => {
    const output = outputs(c)[3].output;
    const scoped = sensitivities(lin, [output], params, scopeOf(c, ['RJ', 'RJD', ...RAIL_SOURCES]));
    expectSameDerivatives(scoped, sensitivities(lin, [output], params));
    expect(scoped.devicesDerived).toBe(devices);
  });

  it('equals them for an element between the rails alone (its adjoint sits on the rail sources’ rows)', () => {
    const rx = c.elements.findIndex((e) => e.name === 'RX');
    const output: OutputFunctional = { terms: [{ kind: 'element', element: rx, weight: 1 }], magnitude: true };
    const scoped = sensitivities(lin, [output], params, scopeOf(c, ['RX', ...RAIL_SOURCES]));
    expectSameDerivatives(scoped, sensitivities(lin, [output], params));
    expect(scoped.devicesDerived).toBe(0);
  });
});

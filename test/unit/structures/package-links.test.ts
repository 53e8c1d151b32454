// Transistors shipped as subcircuits with their package's lead resistance and inductance: recognised as the transistors
// they wrap, while the solve keeps every element.

import { describe, expect, it } from 'vitest';
import { analyseNetlist } from '../checks/netlist-check';

/** A mirror of two wrapped NPNs (invented package: 2 Ω base lead, 0.3 Ω emitter lead, 1 nH collector lead). */
const WRAPPED = (pkg: string, extra = '') => `Discrete mirror with wrapped transistors
VCC vcc 0 12
RREF vcc ref 22k
X1 ref ref 0 NPNPKG
X2 out ref 0 NPNPKG
RL vcc out 4.7k
.subckt NPNPKG C B E
${pkg}
.model QDIE NPN (IS=20f BF=300 VAF=90)
.ends NPNPKG
${extra}.end
`;
const PACKAGE = 'LC C ci 1n\nRBX B bi 2\nREX E ei 0.3\nCBE bi ei 2p\nQ1 ci bi ei QDIE';

describe('package links', () => {
  it('a mirror of wrapped transistors is recognised, with its estimate against the solve', () => {
    const a = analyseNetlist(WRAPPED(PACKAGE));
    expect(a.structures.map((s) => `${s.kind} ${s.devices.join(' ')} fed by ${s.reference.feed} ${s.reference.elements.join(' ')}`)).toEqual([
      'simple-mirror X1.Q1 X2.Q1 fed by resistor RREF',
    ]);
    const s = a.structures[0]!;
    // Independent check, Kirchhoff's current law at ref: IREF = (VCC − V(ref))/RREF, from the solved node voltage.
    const iref = (12 - a.operatingPoint!.nodes['ref']!) / 22e3;
    expect(s.solved!.iref).toBeCloseTo(iref, 9);
    // The hand estimate (VBE at IREF, β and Early effect) lands within 1 % of the solved output current: the 2 Ω and
    // 0.3 Ω leads move it by far less.
    expect(Math.abs(s.estimate!.iout['X2.Q1']! / s.solved!.iout['X2.Q1']! - 1)).toBeLessThan(0.01);
    expect(a.findings.filter((f) => f.severity === 'warning' || f.severity === 'error')).toEqual([]);
    // The solve keeps the leads: the die's base sits below ref by IB·2 Ω (Ohm's law; IB = IC/β, a few µV).
    const ib = s.solved!.iref / 302;
    const drop = a.operatingPoint!.nodes['ref']! - a.operatingPoint!.nodes['X1.bi']!;
    expect(drop).toBeGreaterThan(0);
    expect(drop).toBeCloseTo(2 * ib, 6);
  });

  it('is not seen through a resistor above a lead resistance, nor in a subcircuit with two transistors (a circuit cell)', () => {
    // 47 Ω in the emitter is a degeneration resistor, not a lead: no plain mirror is read through it.
    const degenerated = analyseNetlist(WRAPPED(PACKAGE.replace('REX E ei 0.3', 'REX E ei 47')));
    expect(degenerated.structures.some((s) => s.kind === 'simple-mirror')).toBe(false);
    // A cell with a second transistor is a circuit of its own: its 0.3 Ω emitter resistor stays an element.
    const cell = analyseNetlist(WRAPPED(`${PACKAGE}\nQ9 C ci2 0 QDIE\nR9 ci2 0 1k`));
    expect(cell.structures.some((s) => s.kind === 'simple-mirror' && s.devices.includes('X1.Q1'))).toBe(false);
  });

  it('is not seen through at the top level: base resistors written in the netlist stay part of the circuit', () => {
    const a = analyseNetlist(`Top-level base resistors\nVCC vcc 0 12\nRREF vcc ref 22k\nQ1 ref b1 0 QN\nRB1 ref b1 2\nQ2 out b2 0 QN\nRB2 ref b2 2\nRL vcc out 4.7k\n.model QN NPN (IS=20f BF=300)\n.end\n`);
    expect(a.structures.some((s) => s.kind === 'simple-mirror')).toBe(false);
  });
});

// The diode-referenced current source's tables: a transistor on a zener or a string of forward junctions, with an emitter (source) resistor.

import type { Circuit } from '../../../../shared-analysis/src/circuit';
import type { Technology } from '../../../../shared-analysis/src/structures/types';
import { CircuitBuilder } from '../build';
import { fixture } from '../fixtures';
import { kindTests, type MatchCase } from './tester';

type Ref = 'zener' | 'two-diodes' | 'two-transistors' | 'one-diode' | 'zener-no-re' | 'branched';

/**
 * The source in one technology: a 12 V rail, the reference string from the base node (b) to the
 * rail the emitter resistor RE returns to, a bias resistor RB from the far rail into b, and a 1 kΩ
 * load (invented values). NPN/NMOS sit on ground; PNP/PMOS hang from the supply.
 */
function source(tech: Technology, ref: Ref): Circuit {
  const up = tech === 'npn' || tech === 'nmos';
  const bip = tech === 'npn' || tech === 'pnp';
  const rail = up ? '0' : 'vcc';
  const far = up ? 'vcc' : '0';
  const b = new CircuitBuilder().v('VCC', 'vcc', '0', 12);
  b.model('dz', 'd', { IS: 1e-14, BV: 3.9, IBV: 1e-3 }).model('dn', 'd', { IS: 1e-14 });
  b.model('dev', tech, bip ? { BF: 150, VAF: 80 } : { KP: 200e-6, VTO: up ? 0.5 : -0.5, LAMBDA: 0.02 });
  const q = (name: string, c: string, base: string, e: string) => (bip ? b.q(name, c, base, e, 'dev') : b.mos(name, c, base, e, rail, 'dev', { w: 20e-6, l: 1e-6 }));
  // Diode anode and cathode in the structure's own polarity: "forward" conducts from b towards the rail.
  const fwd = (name: string, hi: string, lo: string) => (up ? b.d(name, hi, lo, 'dn') : b.d(name, lo, hi, 'dn'));
  const zen = (name: string, hi: string, lo: string) => (up ? b.d(name, lo, hi, 'dz') : b.d(name, hi, lo, 'dz'));
  b.r('RB', far, 'b', 4.7e3);
  switch (ref) {
    case 'zener':
    case 'zener-no-re':
      zen('DZ', 'b', rail);
      break;
    case 'two-diodes':
      fwd('D1', 'b', 'm');
      fwd('D2', 'm', rail);
      break;
    case 'two-transistors':
      q('Q3', 'b', 'b', 'm');
      q('Q4', 'm', 'm', rail);
      break;
    case 'one-diode':
      fwd('D1', 'b', rail);
      break;
    case 'branched':
      fwd('D1', 'b', 'm');
      fwd('D2', 'm', rail);
      b.r('RX', 'm', far, 10e3);
      break;
  }
  if (ref === 'zener-no-re') q('Q1', 'out', 'b', rail);
  else {
    q('Q1', 'out', 'b', 'e');
    b.r('RE', 'e', rail, bip ? 1.5e3 : 2.2e3);
  }
  b.r('RL', far, 'out', 1e3);
  return b.build();
}

const TECHS = ['npn', 'pnp', 'nmos', 'pmos'] as const;

const matches: MatchCase[] = [
  ...TECHS.map((tech) => ({
    name: `a ${tech.toUpperCase()} source on a zener`,
    circuit: () => source(tech, 'zener'),
    technology: tech,
    reference: 'Q1',
    devices: ['Q1'],
    outputs: [{ device: 'Q1', ratio: 1 }],
  })),
  ...TECHS.map((tech) => ({
    name: `a ${tech.toUpperCase()} source on two forward diodes`,
    circuit: () => source(tech, 'two-diodes'),
    technology: tech,
    reference: 'Q1',
    devices: ['Q1'],
    outputs: [{ device: 'Q1', ratio: 1 }],
  })),
  ...TECHS.map((tech) => ({
    name: `a ${tech.toUpperCase()} source on two diode-connected transistors`,
    circuit: () => source(tech, 'two-transistors'),
    technology: tech,
    reference: 'Q1',
    devices: ['Q1', 'Q3', 'Q4'],
    outputs: [{ device: 'Q1', ratio: 1 }],
  })),
];

kindTests({
  kind: 'diode-referenced-source',
  matches,
  rejects: [
    ...TECHS.map((tech) => ({ name: `a ${tech.toUpperCase()} base on one forward diode (not a reference of its own)`, circuit: () => source(tech, 'one-diode') })),
    ...TECHS.map((tech) => ({ name: `a ${tech.toUpperCase()} zener-biased device with its emitter on the rail (no resistor sets the current)`, circuit: () => source(tech, 'zener-no-re') })),
    { name: 'a diode string with a branch off its middle node', circuit: () => source('npn', 'branched') },
    { name: 'a Widlar source (one diode-connected reference)', circuit: () => fixture('widlar-source', 'npn').circuit },
    {
      name: 'a divider-biased common-emitter stage with an emitter resistor',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 12)
          .model('qn', 'npn')
          .r('R1', 'vcc', 'b', 47e3)
          .r('R2', 'b', '0', 10e3)
          .q('Q1', 'c', 'b', 'e', 'qn')
          .r('RC', 'vcc', 'c', 4.7e3)
          .r('RE', 'e', '0', 1e3)
          .build(),
    },
  ],
  yields: [],
});

// The op-amp-regulated current source's tables: an E-source amplifier holding a transistor's emitter (source) at a reference across a sense resistor.

import type { Circuit } from '../../../../shared-analysis/src/circuit';
import type { Technology } from '../../../../shared-analysis/src/structures/types';
import { CircuitBuilder } from '../build';
import { fixture } from '../fixtures';
import { kindTests, type MatchCase } from './tester';

type Wiring = 'regulated' | 'positive-feedback' | 'buffer' | 'no-sense-resistor' | 'swapped-inputs-negative-gain' | 'subcircuit-amplifier' | 'output-resistor-loaded';

/**
 * The source in one technology: 12 V, a 10 k/1 k divider (NPN/NMOS from the supply to ground; PNP/PMOS
 * mirrored) for the reference input, the amplifier EAMP on the base (gate), a 220 Ω sense resistor
 * to the rail and a 1 kΩ load (invented values).
 */
function source(tech: Technology, wiring: Wiring): Circuit {
  const up = tech === 'npn' || tech === 'nmos';
  const bip = tech === 'npn' || tech === 'pnp';
  const rail = up ? '0' : 'vcc';
  const far = up ? 'vcc' : '0';
  const b = new CircuitBuilder().v('VCC', 'vcc', '0', 12);
  b.model('dev', tech, bip ? { BF: 150, VAF: 80 } : { KP: 2e-3, VTO: up ? 0.8 : -0.8, LAMBDA: 0.02 });
  b.r('R1', far, 'ref', 10e3).r('R2', 'ref', rail, 1e3);
  const gain = wiring === 'buffer' ? 1 : 1e5;
  if (wiring === 'positive-feedback') b.e('EAMP', 'b', '0', 's', 'ref', gain);
  else if (wiring === 'swapped-inputs-negative-gain') b.e('EAMP', 'b', '0', 's', 'ref', -gain);
  else if (wiring === 'subcircuit-amplifier' || wiring === 'output-resistor-loaded') {
    // An amplifier written as a subcircuit, flattened: its E source behind an output resistor.
    b.e('XA.E1', 'XA.int', '0', 'ref', 's', gain).r('XA.RO', 'XA.int', 'b', 100);
    // Something else on the amplifier's internal node: no longer a plain output resistance.
    if (wiring === 'output-resistor-loaded') b.r('RLOAD', 'XA.int', '0', 10e3);
  } else b.e('EAMP', 'b', '0', 'ref', 's', gain);
  const emitter = wiring === 'no-sense-resistor' ? rail : 's';
  if (bip) b.q('Q1', 'out', 'b', emitter, 'dev');
  else b.mos('Q1', 'out', 'b', emitter, rail, 'dev', { w: 20e-6, l: 1e-6 });
  if (wiring !== 'no-sense-resistor') b.r('RS', 's', rail, 220);
  else b.r('RS', 's', rail, 220).r('RX', 's', far, 10e3);
  b.r('RL', far, 'out', 1e3);
  return b.build();
}

const TECHS = ['npn', 'pnp', 'nmos', 'pmos'] as const;

const matches: MatchCase[] = [
  ...TECHS.map((tech) => ({
    name: `a ${tech.toUpperCase()} pass device held by the amplifier across RS`,
    circuit: () => source(tech, 'regulated'),
    technology: tech,
    reference: 'Q1',
    devices: ['Q1'],
    outputs: [{ device: 'Q1', ratio: 1 }],
  })),
  ...TECHS.map((tech) => ({
    name: `a ${tech.toUpperCase()} pass device driven by a subcircuit amplifier through its output resistor`,
    circuit: () => source(tech, 'subcircuit-amplifier'),
    technology: tech,
    reference: 'Q1',
    devices: ['Q1'],
    outputs: [{ device: 'Q1', ratio: 1 }],
  })),
  {
    name: 'the same with the inputs swapped and a negative gain (still negative feedback)',
    circuit: () => source('npn', 'swapped-inputs-negative-gain'),
    technology: 'npn',
    reference: 'Q1',
    devices: ['Q1'],
    outputs: [{ device: 'Q1', ratio: 1 }],
  },
];

kindTests({
  kind: 'regulated-source',
  matches,
  rejects: [
    { name: 'feedback on the non-inverting input (positive feedback, a latch)', circuit: () => source('npn', 'positive-feedback') },
    { name: 'a unity-gain buffer driving the base (an emitter follower, not a regulator)', circuit: () => source('npn', 'buffer') },
    { name: 'the emitter on the rail with no sense resistor', circuit: () => source('npn', 'no-sense-resistor') },
    { name: 'an amplifier behind a resistor whose node also carries a load (not an output resistance)', circuit: () => source('npn', 'output-resistor-loaded') },
    { name: 'a simple mirror', circuit: () => fixture('simple-mirror', 'npn').circuit },
  ],
  yields: [],
});

// The degenerated mirror's tables: emitter (source) resistors on the reference and each output to one common node.

import { CircuitBuilder } from '../build';
import { fixtureMatches, kindTests } from './tester';

kindTests({
  kind: 'degenerated-mirror',
  matches: [
    ...fixtureMatches('degenerated-mirror', 'Q1', ['Q1', 'Q2'], 'Q2'),
    {
      // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — the resistor ratio sets the current ratio at large drops.
      name: 'a 1:2 ratio set by the resistors',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 12)
          .model('qn', 'npn')
          .r('RREF', 'vcc', 'a', 10e3)
          .q('Q1', 'a', 'a', 'e1', 'qn')
          .r('R1', 'e1', '0', 2e3)
          .q('Q2', 'out', 'a', 'e2', 'qn')
          .r('R2', 'e2', '0', 1e3)
          .r('RL', 'vcc', 'out', 2e3)
          .build(),
      technology: 'npn',
      reference: 'Q1',
      devices: ['Q1', 'Q2'],
      outputs: [{ device: 'Q2', ratio: 1 }],
    },
  ],
  rejects: [
    {
      name: 'an output whose emitter resistor goes elsewhere than the reference resistor\'s far end',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .v('VM', 'm', '0', 0.2)
          .model('qn', 'npn')
          .r('RREF', 'vcc', 'a', 4.3e3)
          .q('Q1', 'a', 'a', 'e1', 'qn')
          .r('R1', 'e1', '0', 1e3)
          .q('Q2', 'out', 'a', 'e2', 'qn')
          .r('R2', 'e2', 'm', 1e3)
          .build(),
    },
    {
      name: 'an output sharing the reference\'s emitter resistor',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .r('RREF', 'vcc', 'a', 4.3e3)
          .q('Q1', 'a', 'a', 'e1', 'qn')
          .q('Q2', 'out', 'a', 'e1', 'qn')
          .r('R1', 'e1', '0', 1e3)
          .build(),
    },
  ],
  yields: [],
});

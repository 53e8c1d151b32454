// The cascode mirror's tables: two stacked diode-connected devices on the reference side, the output stacked on the lower partner.

import { CircuitBuilder } from '../build';
import { fixtureMatches, kindTests } from './tester';

kindTests({
  kind: 'cascode-mirror',
  matches: fixtureMatches('cascode-mirror', 'Q3', ['Q1', 'Q2', 'Q3', 'Q4'], 'Q4'),
  rejects: [
    {
      // A cascoded output on a plain mirror whose cascode gate is biased from a separate rail is not a cascode mirror.
      name: 'an output cascode biased by a fixed voltage',
      circuit: () =>
        new CircuitBuilder()
          .v('VDD', 'vdd', '0', 5)
          .v('VC', 'vc', '0', 2)
          .model('n', 'nmos', { KP: 1e-4, VTO: 0.5 })
          .r('R1', 'vdd', 'b', 10e3)
          .mos('M1', 'b', 'b', '0', '0', 'n')
          .mos('M2', 'c', 'b', '0', '0', 'n')
          .mos('M4', 'out', 'vc', 'c', '0', 'n')
          .build(),
    },
  ],
  yields: [],
});

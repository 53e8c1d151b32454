// The improved Wilson mirror's tables: the fourth, diode-connected device balances the lower pair.

import { CircuitBuilder } from '../build';
import { fixtureMatches, kindTests } from './tester';

kindTests({
  kind: 'improved-wilson-mirror',
  matches: fixtureMatches('improved-wilson-mirror', 'Q4', ['Q1', 'Q2', 'Q3', 'Q4'], 'Q3'),
  rejects: [
    {
      name: 'the balancing device is not diode-connected',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .r('R1', 'vcc', 'a', 4.3e3)
          .q('Q1', 'c', 'b', '0', 'qn')
          .q('Q2', 'b', 'b', '0', 'qn')
          .q('Q3', 'out', 'a', 'b', 'qn')
          .q('Q4', 'a', 'x', 'c', 'qn')
          .v('VX', 'x', '0', 2)
          .build(),
    },
  ],
  yields: [],
});

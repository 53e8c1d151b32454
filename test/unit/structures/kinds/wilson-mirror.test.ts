// The Wilson mirror's tables: three devices with the reference collector driving the output's base.

import { CircuitBuilder } from '../build';
import { fixture } from '../fixtures';
import { fixtureMatches, kindTests } from './tester';

kindTests({
  kind: 'wilson-mirror',
  matches: fixtureMatches('wilson-mirror', 'Q1', ['Q1', 'Q2', 'Q3'], 'Q3'),
  rejects: [
    {
      name: 'an output whose emitter is not on the lower diode',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .r('R1', 'vcc', 'a', 4.3e3)
          .q('Q1', 'a', 'b', '0', 'qn')
          .q('Q2', 'b', 'b', '0', 'qn')
          .q('Q3', 'out', 'a', 'x', 'qn')
          .r('RX', 'x', '0', 1e3)
          .build(),
    },
  ],
  yields: [{ name: 'a balancing diode on the reference side', circuit: () => fixture('improved-wilson-mirror', 'pnp').circuit, to: 'improved-wilson-mirror' }],
});

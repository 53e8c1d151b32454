// The base-current-helper mirror's tables: a follower from the reference's collector supplies the shared control node.

import { CircuitBuilder } from '../build';
import { fixture } from '../fixtures';
import { fixtureMatches, kindTests } from './tester';

kindTests({
  kind: 'helper-mirror',
  matches: fixtureMatches('helper-mirror', 'Q1', ['Q1', 'Q2', 'Q3'], 'Q2'),
  rejects: [
    {
      name: 'a follower whose collector is not on a rail',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .r('R1', 'vcc', 'a', 4.3e3)
          .q('Q1', 'a', 'b', '0', 'qn')
          .q('Q3', 'x', 'a', 'b', 'qn')
          .r('RX', 'vcc', 'x', 1e3)
          .q('Q2', 'out', 'b', '0', 'qn')
          .build(),
    },
    {
      name: 'an NMOS follower with nothing on the gate node to bias it',
      circuit: () =>
        new CircuitBuilder()
          .v('VDD', 'vdd', '0', 5)
          .model('n', 'nmos', { KP: 1e-4, VTO: 0.5 })
          .r('R1', 'vdd', 'a', 10e3)
          .mos('M1', 'a', 'b', '0', '0', 'n')
          .mos('M3', 'vdd', 'a', 'b', '0', 'n')
          .mos('M2', 'out', 'b', '0', '0', 'n')
          .build(),
    },
  ],
  yields: [
    {
      // A diode-connected device on the shared node makes it a Wilson-like stack.
      name: 'a Wilson mirror (its output is a follower of the reference collector too)',
      circuit: () => fixture('wilson-mirror', 'npn').circuit,
      to: 'wilson-mirror',
    },
  ],
});

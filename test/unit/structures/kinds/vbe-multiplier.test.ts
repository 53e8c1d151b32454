// The VBE multiplier's tables: a device whose base sits on a divider from its collector to its emitter.

import { CircuitBuilder } from '../build';
import { fixture } from '../fixtures';
import { multiplier } from './circuits';
import { kindTests, type MatchCase } from './tester';

const cases: MatchCase[] = (['npn', 'pnp', 'nmos', 'pmos'] as const).map((tech) => ({
  name: `the ${tech.toUpperCase()} multiplier fed by a resistor`,
  circuit: () => multiplier(tech),
  technology: tech,
  reference: 'Q1',
  devices: ['Q1'],
  outputs: [],
}));

kindTests({
  kind: 'vbe-multiplier',
  matches: cases,
  rejects: [
    {
      name: 'a base divider between the rails (a biased common-emitter stage)',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 10)
          .model('qn', 'npn')
          .r('RB1', 'vcc', 'b', 47e3)
          .r('RB2', 'b', '0', 10e3)
          .q('Q1', 'c', 'b', 'e', 'qn')
          .r('RC', 'vcc', 'c', 4.7e3)
          .r('RE', 'e', '0', 1e3)
          .build(),
    },
    {
      name: 'a base node with a third element',
      circuit: () => {
        const c = multiplier('npn');
        return { ...c, elements: [...c.elements, { ...c.elements.find((e) => e.name === 'R2')!, name: 'R9' }] };
      },
    },
    { name: 'a simple mirror', circuit: () => fixture('simple-mirror', 'npn').circuit },
  ],
  yields: [],
});

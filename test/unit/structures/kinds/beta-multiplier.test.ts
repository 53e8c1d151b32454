// The beta-multiplier reference's tables: a square-law pair of beta ratio K in a loop closed by a mirror of the other polarity.

import { CircuitBuilder } from '../build';
import { selfBiasedLoop } from './circuits';
import { kindTests, type MatchCase } from './tester';

const cases: MatchCase[] = [];
for (const core of ['nmos', 'pmos'] as const) {
  for (const closing of ['mos', 'bjt'] as const) {
    for (const startup of [undefined, 2e6]) {
      cases.push({
        name: `${core.toUpperCase()} core, ${closing === 'bjt' ? 'bipolar' : 'MOS'} closing mirror${startup ? ', with a start-up resistor' : ''}`,
        circuit: () => selfBiasedLoop({ core, closing, startup }).circuit,
        technology: core,
        reference: 'MQ1',
        devices: ['MQ1', 'MQ2'],
        outputs: [{ device: 'MQ2', ratio: 1 }],
      });
    }
  }
}

kindTests({
  kind: 'beta-multiplier',
  matches: cases,
  rejects: [
    {
      name: 'an NMOS Widlar source fed by a current source',
      circuit: () =>
        new CircuitBuilder()
          .v('VDD', 'vdd', '0', 3.3)
          .model('n', 'nmos', { KP: 1e-4, VTO: 0.5 })
          .i('IB', 'vdd', 'g', 50e-6)
          .mos('M1', 'g', 'g', '0', '0', 'n')
          .mos('M2', 'd', 'g', 's', '0', 'n', { w: 40e-6 })
          .r('RS', 's', '0', 5e3)
          .r('RL', 'vdd', 'd', 10e3)
          .build(),
    },
  ],
  yields: [],
});

// The wide-swing cascode's tables: bottom gates on the reference cascode's drain, cascode gates on a separate bias branch.

import { CircuitBuilder } from '../build';
import { fixture } from '../fixtures';
import { wideSwing } from './circuits';
import { kindTests, type MatchCase } from './tester';

const cases: MatchCase[] = [];
for (const tech of ['nmos', 'pmos'] as const) {
  for (const biasW of [1.5e-6, 2.5e-6, 5e-6]) {
    cases.push({
      name: `${tech.toUpperCase()}, bias device ${biasW * 1e6} µm wide (${biasW < 2e-6 ? 'bottom pair saturated' : 'bottom pair in triode'})`,
      circuit: () => wideSwing(tech, { biasW }),
      technology: tech,
      reference: 'M1',
      devices: ['M1', 'M2', 'M3', 'M4', 'M5'],
      outputs: [{ device: 'M4', ratio: 1 }],
    });
  }
}
cases.push({
  name: 'a 1:2 output',
  circuit: () => wideSwing('nmos', { ratio: 2 }),
  technology: 'nmos',
  reference: 'M1',
  devices: ['M1', 'M2', 'M3', 'M4', 'M5'],
  outputs: [{ device: 'M4', ratio: 2 }],
});

kindTests({
  kind: 'wide-swing-cascode',
  matches: cases,
  rejects: [
    { name: 'a standard cascode mirror (two stacked diodes)', circuit: () => fixture('cascode-mirror', 'nmos').circuit },
    {
      name: 'cascode gates on a fixed voltage, no bias device',
      circuit: () =>
        new CircuitBuilder()
          .v('VDD', 'vdd', '0', 3.3)
          .v('VC', 'gc', '0', 0.9)
          .model('n', 'nmos', { KP: 200e-6, VTO: 0.45 })
          .i('IREF', 'vdd', 'a', 50e-6)
          .mos('M1', 'x1', 'a', '0', '0', 'n')
          .mos('M3', 'a', 'gc', 'x1', '0', 'n')
          .mos('M2', 'x2', 'a', '0', '0', 'n')
          .mos('M4', 'out', 'gc', 'x2', '0', 'n')
          .r('RL', 'vdd', 'out', 20e3)
          .build(),
    },
    {
      name: 'a bipolar stack of the same shape (the technique is a MOS one)',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .i('IREF', 'vcc', 'a', 50e-6)
          .q('Q1', 'x1', 'a', '0', 'qn')
          .q('Q3', 'a', 'gc', 'x1', 'qn')
          .q('Q2', 'x2', 'a', '0', 'qn')
          .q('Q4', 'out', 'gc', 'x2', 'qn')
          .q('Q5', 'gc', 'gc', '0', 'qn')
          .i('IB', 'vcc', 'gc', 50e-6)
          .build(),
    },
  ],
  yields: [],
});

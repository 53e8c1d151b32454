// The ΔVBE (PTAT) cell's tables: a bipolar pair of density ratio N in a loop closed by a mirror of the other polarity.

import { CircuitBuilder } from '../build';
import { fixture } from '../fixtures';
import { selfBiasedLoop } from './circuits';
import { kindTests, type MatchCase } from './tester';

const cases: MatchCase[] = [];
for (const core of ['npn', 'pnp'] as const) {
  for (const closing of ['bjt', 'mos'] as const) {
    for (const startup of [undefined, 1e6]) {
      cases.push({
        name: `${core.toUpperCase()} core, ${closing === 'bjt' ? 'bipolar' : 'MOS'} closing mirror${startup ? ', with a start-up resistor' : ''}`,
        circuit: () => selfBiasedLoop({ core, closing, startup }).circuit,
        technology: core,
        reference: 'Q1',
        devices: ['Q1', 'Q2'],
        outputs: [{ device: 'Q2', ratio: 1 }],
      });
    }
  }
}
cases.push({
  name: 'N set by M= and a 2:1 closing mirror',
  circuit: () =>
    new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn', { BF: 150 })
      .model('qp', 'pnp', { BF: 60 })
      .q('Q1', 'n1', 'n1', '0', 'qn')
      .q('Q2', 'p', 'n1', 'x', 'qn', { m: 4 })
      .r('R', 'x', '0', 2e3)
      .q('QP1', 'p', 'p', 'vcc', 'qp')
      .q('QP2', 'n1', 'p', 'vcc', 'qp', { area: 2 })
      .build(),
  technology: 'npn',
  reference: 'Q1',
  devices: ['Q1', 'Q2'],
  outputs: [{ device: 'Q2', ratio: 0.5 }],
});

kindTests({
  kind: 'ptat-cell',
  matches: cases,
  rejects: [
    {
      // A Widlar source fed by a resistor: no mirror returns its output current.
      name: 'a Widlar source with a resistor feed',
      circuit: () => fixture('widlar-source', 'npn').circuit,
    },
    {
      name: 'a closing mirror of the same polarity as the core',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .q('Q1', 'n1', 'n1', '0', 'qn')
          .q('Q2', 'p', 'n1', 'x', 'qn', { area: 8 })
          .r('R', 'x', '0', 1e3)
          .r('RP', 'vcc', 'p', 10e3)
          .q('Q5', 'n1', 'p', '0', 'qn')
          .build(),
    },
    {
      name: 'the mirror on the output drives a node other than the reference',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .model('qp', 'pnp')
          .r('RREF', 'vcc', 'n1', 100e3)
          .q('Q1', 'n1', 'n1', '0', 'qn')
          .q('Q2', 'p', 'n1', 'x', 'qn', { area: 8 })
          .r('R', 'x', '0', 1e3)
          .q('QP1', 'p', 'p', 'vcc', 'qp')
          .q('QP2', 'out', 'p', 'vcc', 'qp')
          .r('RL', 'out', '0', 10e3)
          .build(),
    },
  ],
  yields: [{ name: 'a cell with a bandgap output branch', circuit: () => selfBiasedLoop({ core: 'npn', bandgap: { r2: 10e3 } }).circuit, to: 'bandgap-core' }],
});

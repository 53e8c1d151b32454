// The bandgap core's tables: a ΔVBE cell whose PTAT current, mirrored into R2 on a diode-connected device, gives VBG.

import { CircuitBuilder } from '../build';
import { selfBiasedLoop } from './circuits';
import { kindTests, type MatchCase } from './tester';

const cases: MatchCase[] = [];
for (const core of ['npn', 'pnp'] as const) {
  for (const closing of ['bjt', 'mos'] as const) {
    cases.push({
      name: `${core.toUpperCase()} core, ${closing === 'bjt' ? 'bipolar' : 'MOS'} closing mirror, with a start-up resistor`,
      circuit: () => selfBiasedLoop({ core, closing, startup: 2e6, bandgap: { r2: 10e3 } }).circuit,
      technology: core,
      reference: 'Q1',
      devices: ['Q1', 'Q2', 'Q3'],
      outputs: [{ device: 'Q2', ratio: 1 }],
    });
  }
}
cases.push({
  name: 'a diode instead of a diode-connected transistor in the output branch',
  circuit: () =>
    new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn', { BF: 100 })
      .model('qp', 'pnp', { BF: 50 })
      .model('dn', 'd', { IS: 1e-16 })
      .q('Q1', 'n1', 'n1', '0', 'qn')
      .q('Q2', 'p', 'n1', 'x', 'qn', { area: 8 })
      .r('R', 'x', '0', 1e3)
      .q('QP1', 'p', 'p', 'vcc', 'qp')
      .q('QP2', 'n1', 'p', 'vcc', 'qp')
      .q('QP3', 'vbg', 'p', 'vcc', 'qp')
      .r('R2', 'vbg', 'y', 10e3)
      .d('D3', 'y', '0', 'dn')
      .r('RSU', 'vcc', 'n1', 2e6)
      .build(),
  technology: 'npn',
  reference: 'Q1',
  devices: ['Q1', 'Q2'],
  outputs: [{ device: 'Q2', ratio: 1 }],
});

kindTests({
  kind: 'bandgap-core',
  matches: cases,
  rejects: [
    {
      name: 'the extra mirror output drives a plain resistor to the rail',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .model('qp', 'pnp')
          .q('Q1', 'n1', 'n1', '0', 'qn')
          .q('Q2', 'p', 'n1', 'x', 'qn', { area: 8 })
          .r('R', 'x', '0', 1e3)
          .q('QP1', 'p', 'p', 'vcc', 'qp')
          .q('QP2', 'n1', 'p', 'vcc', 'qp')
          .q('QP3', 'vbg', 'p', 'vcc', 'qp')
          .r('R2', 'vbg', '0', 20e3)
          .build(),
    },
    {
      name: 'the output node also carries a load',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .model('qp', 'pnp')
          .q('Q1', 'n1', 'n1', '0', 'qn')
          .q('Q2', 'p', 'n1', 'x', 'qn', { area: 8 })
          .r('R', 'x', '0', 1e3)
          .q('QP1', 'p', 'p', 'vcc', 'qp')
          .q('QP2', 'n1', 'p', 'vcc', 'qp')
          .q('QP3', 'vbg', 'p', 'vcc', 'qp')
          .r('R2', 'vbg', 'y', 10e3)
          .q('Q3', 'y', 'y', '0', 'qn')
          .r('RLOAD', 'vbg', '0', 100e3)
          .build(),
    },
    { name: 'a beta-multiplier with an output branch (no VBE to add)', circuit: () => selfBiasedLoop({ core: 'nmos', bandgap: { r2: 10e3 } }).circuit },
  ],
  yields: [],
});

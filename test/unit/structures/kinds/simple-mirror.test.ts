// The simple current mirror's tables: where it is recognised, the look-alikes it leaves alone, and the kinds that contain it.

import { CircuitBuilder } from '../build';
import { fixture } from '../fixtures';
import { fixtureMatches, kindTests } from './tester';

kindTests({
  kind: 'simple-mirror',
  matches: [
    ...fixtureMatches('simple-mirror', 'Q1', ['Q1', 'Q2'], 'Q2'),
    {
      // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — outputs ratioed by area share one reference.
      name: 'three outputs ratioed by area and M, with a paralleled reference twin',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .r('R1', 'vcc', 'ref', 10e3)
          .q('Q1', 'ref', 'ref', '0', 'qn')
          .q('Q1B', 'ref', 'ref', '0', 'qn')
          .q('Q2', 'o2', 'ref', '0', 'qn', { area: 2 })
          .q('Q3', 'o3', 'ref', '0', 'qn', { m: 4 })
          .r('RL2', 'vcc', 'o2', 1e3)
          .r('RL3', 'vcc', 'o3', 1e3)
          .build(),
      technology: 'npn',
      reference: 'Q1',
      devices: ['Q1', 'Q1B', 'Q2', 'Q3'],
      outputs: [
        { device: 'Q2', ratio: 1 },
        { device: 'Q3', ratio: 2 },
      ],
    },
    {
      // Source: the transport model (docs/DEVICE-MODELS.md) — at one VBE, IC scales with IS, so a model with 3×IS (and 2× area)
      // is a 1:6 output; a PNP pair ratioed the same way. The estimate must carry it (within 10 % of the solve).
      name: 'outputs ratioed by IS in their model (with area on top), NPN and PNP',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 9)
          .model('qa', 'npn', { IS: 1e-16, BF: 150 })
          .model('qb', 'npn', { IS: 3e-16, BF: 150 })
          .r('R1', 'vcc', 'ref', 47e3)
          .q('Q1', 'ref', 'ref', '0', 'qa')
          .q('Q2', 'o2', 'ref', '0', 'qb', { area: 2 })
          .r('RL2', 'vcc', 'o2', 1e3)
          .build(),
      technology: 'npn',
      reference: 'Q1',
      devices: ['Q1', 'Q2'],
      outputs: [{ device: 'Q2', ratio: 6 }],
    },
    {
      name: 'a PNP output ratioed by IS',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 9)
          .model('pa', 'pnp', { IS: 1e-16, BF: 80 })
          .model('pb', 'pnp', { IS: 4e-16, BF: 80 })
          .r('R1', 'ref', '0', 47e3)
          .q('Q1', 'ref', 'ref', 'vcc', 'pa')
          .q('Q2', 'o2', 'ref', 'vcc', 'pb')
          .r('RL2', 'o2', '0', 1e3)
          .build(),
      technology: 'pnp',
      reference: 'Q1',
      devices: ['Q1', 'Q2'],
      outputs: [{ device: 'Q2', ratio: 4 }],
    },
    {
      name: 'a plain output beside a Widlar output keeps the simple mirror',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .r('R1', 'vcc', 'ref', 4.3e3)
          .q('Q1', 'ref', 'ref', '0', 'qn')
          .q('Q2', 'o2', 'ref', '0', 'qn')
          .q('Q3', 'o3', 'ref', 'e3', 'qn')
          .r('RE3', 'e3', '0', 2e3)
          .r('RL2', 'vcc', 'o2', 1e3)
          .r('RL3', 'vcc', 'o3', 1e3)
          .build(),
      technology: 'npn',
      reference: 'Q1',
      devices: ['Q1', 'Q2', 'Q3'],
      outputs: [
        { device: 'Q2', ratio: 1 },
        { device: 'Q3', ratio: 1 },
      ],
    },
  ],
  rejects: [
    {
      name: 'two devices sharing a base with no diode-connected one',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .v('VB', 'b', '0', 0.65)
          .model('qn', 'npn')
          .q('Q1', 'c1', 'b', '0', 'qn')
          .q('Q2', 'c2', 'b', '0', 'qn')
          .r('R1', 'vcc', 'c1', 1e3)
          .r('R2', 'vcc', 'c2', 1e3)
          .build(),
    },
    {
      name: 'a differential pair with a tail source',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .v('VP', 'inp', '0', 2)
          .v('VN', 'inn', '0', 2)
          .model('qn', 'npn')
          .q('Q1', 'c1', 'inp', 'tail', 'qn')
          .q('Q2', 'c2', 'inn', 'tail', 'qn')
          .i('IT', 'tail', '0', 1e-3)
          .r('R1', 'vcc', 'c1', 2e3)
          .r('R2', 'vcc', 'c2', 2e3)
          .build(),
    },
    {
      name: 'a lone diode-connected device',
      circuit: () => new CircuitBuilder().v('VCC', 'vcc', '0', 5).model('qn', 'npn').r('R1', 'vcc', 'a', 4.3e3).q('Q1', 'a', 'a', '0', 'qn').build(),
    },
    {
      name: 'a device of the other polarity on the diode node',
      circuit: () =>
        new CircuitBuilder()
          .v('VCC', 'vcc', '0', 5)
          .model('qn', 'npn')
          .model('qp', 'pnp')
          .r('R1', 'vcc', 'a', 4.3e3)
          .q('Q1', 'a', 'a', '0', 'qn')
          .q('Q2', '0', 'a', 'vcc', 'qp')
          .build(),
    },
  ],
  yields: [
    { name: 'the lower pair of a Wilson mirror', circuit: () => fixture('wilson-mirror', 'npn').circuit, to: 'wilson-mirror' },
    { name: 'the lower pair of a cascode mirror', circuit: () => fixture('cascode-mirror', 'nmos').circuit, to: 'cascode-mirror' },
    { name: 'a reference whose only output has an emitter resistor', circuit: () => fixture('widlar-source', 'npn').circuit, to: 'widlar-source' },
  ],
});

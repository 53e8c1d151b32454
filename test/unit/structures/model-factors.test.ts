// The hand analysis reads each model's temperature factors once per set of conditions: its estimates must be
// those of a circuit whose models were never read before, whatever was estimated in between.

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { estimateStructure, type EstimateAt } from '../../../shared-analysis/src/structures/estimate';
import { Hand } from '../../../shared-analysis/src/structures/hand';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { topologyOf } from '../../../shared-analysis/src/structures/topology';
import { CircuitBuilder } from './build';

/**
 * One circuit whose models serve structures of both polarities: a beta multiplier (NMOS core, PMOS closing
 * mirror) beside a PMOS simple mirror on the same PMOS model, an NPN mirror and a PNP mirror whose models give β
 * a current dependence (IKF) and a temperature exponent (XTB), and a JFET source.
 */
function shared(): Circuit {
  const b = new CircuitBuilder();
  b.v('VDD', 'vdd', '0', 5);
  b.model('mn', 'nmos', { KP: 1.2e-4, VTO: 0.5, GAMMA: 0.3, TCV: 1e-3 }).model('mp', 'pmos', { KP: 4e-5, VTO: -0.6, BEX: -1.5 });
  b.model('qn', 'npn', { BF: 150, IKF: 5e-3, XTB: 1.5, XTI: 3, VAF: 80 }).model('qp', 'pnp', { BF: 60, XTB: 1.2 }).model('jx', 'njf', { VTO: -2, BETA: 1e-3, VTOTC: -2e-3 });
  b.mos('M1', 'n1', 'n1', '0', '0', 'mn', { w: 10e-6, l: 1e-6 }).mos('M2', 'p', 'n1', 'x2', '0', 'mn', { w: 40e-6, l: 1e-6 }).r('R', 'x2', '0', 5e3);
  b.mos('MP1', 'p', 'p', 'vdd', 'vdd', 'mp', { w: 10e-6, l: 1e-6 }).mos('MP2', 'n1', 'p', 'vdd', 'vdd', 'mp', { w: 10e-6, l: 1e-6 }).r('RSU', 'vdd', 'n1', 5e6);
  b.r('RPM', 'pa', '0', 30e3).mos('MP3', 'pa', 'pa', 'vdd', 'vdd', 'mp', { w: 20e-6, l: 1e-6 }).mos('MP4', 'po', 'pa', 'vdd', 'vdd', 'mp', { w: 20e-6, l: 1e-6 }).r('RLP', 'po', '0', 5e3);
  b.r('RQN', 'vdd', 'qa', 4.3e3).q('Q1', 'qa', 'qa', '0', 'qn').q('Q2', 'qo', 'qa', '0', 'qn', { area: 2 }).r('RLQ', 'vdd', 'qo', 1e3);
  b.r('RQP', 'pb', '0', 6.8e3).q('Q3', 'pb', 'pb', 'vdd', 'qp').q('Q4', 'pq', 'pb', 'vdd', 'qp').r('RLQP', 'pq', '0', 2e3);
  b.jfet('J1', 'jd', '0', 'js', 'jx').r('RS', 'js', '0', 500).r('RLJ', 'vdd', 'jd', 3.3e3);
  return b.build();
}

const CONDITIONS: EstimateAt[] = [
  { temperatureC: 27 },
  // Each condition differs from the one before in one respect at least once.
  { temperatureC: 27, betaScale: 0.5 },
  { temperatureC: 85, betaScale: 0.5 },
  { temperatureC: -40, betaScale: 2 },
  // A collector current per device, so the IKF model's β is worked out at it.
  { temperatureC: 27, deviceCurrents: { Q1: 1e-3, Q2: 2e-3, Q3: 7e-4, Q4: 7e-4 } },
];

describe('hand analysis model factors', () => {
  it('gives every structure the estimate of a circuit read afresh, at each set of conditions, in any order (steps included)', () => {
    const circuit = shared();
    const structures = recogniseStructures(circuit);
    // Every structure here must be found, or the comparison misses the polarity and family it is about (the PMOS model
    // serves the NMOS beta multiplier and, with the other sign, the PMOS mirrors, its closing mirror among them).
    expect(structures.map((s) => s.id).sort()).toEqual(['beta-multiplier:M1', 'jfet-self-biased-source:J1', 'simple-mirror:MP1', 'simple-mirror:MP3', 'simple-mirror:Q1', 'simple-mirror:Q3']);
    // Interleaved: each condition after another, the structures in both orders.
    const reused = new Map<string, unknown>();
    for (let round = 0; round < 2; round++) {
      for (const at of round === 0 ? CONDITIONS : [...CONDITIONS].reverse()) {
        const list = round === 0 ? structures : [...structures].reverse();
        for (const s of list) reused.set(`${s.id}@${JSON.stringify(at)}#${round}`, estimateStructure(circuit, s, at));
      }
    }
    for (const at of CONDITIONS) {
      structures.forEach((_, i) => {
        // A new circuit has new model objects, one per structure: nothing read before applies to it.
        const fresh = shared();
        const s = recogniseStructures(fresh)[i];
        const want = estimateStructure(fresh, s, at);
        for (const round of [0, 1]) expect(reused.get(`${s.id}@${JSON.stringify(at)}#${round}`), `${s.id} at ${JSON.stringify(at)}`).toEqual(want);
      });
    }
  });

  it("gives every device, read in a structure of either polarity, the parameters of a circuit read afresh", () => {
    const circuit = shared();
    const structures = recogniseStructures(circuit);
    const names = topologyOf(circuit).transistors.map((t) => t.name);
    // Each device as each structure's hand analysis would read it (an NMOS structure reading a PMOS device too).
    const read = (c: Circuit, s: (typeof structures)[number], at: EstimateAt) => names.map((n) => ({ ...new Hand(c, s, at, undefined, false).dev(n), t: undefined, model: undefined }));
    const reused = CONDITIONS.map((at) => structures.map((s) => read(circuit, s, at)));
    CONDITIONS.forEach((at, k) => {
      structures.forEach((_, i) => {
        // A new circuit per structure: its models are read at one sign only.
        const fresh = shared();
        expect(reused[k][i], `${structures[i].id} at ${JSON.stringify(at)}`).toEqual(read(fresh, recogniseStructures(fresh)[i], at));
      });
    });
  });
});

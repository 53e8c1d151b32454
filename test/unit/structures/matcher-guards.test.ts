// The matcher's cheap test for a seed's degenerated-output candidates against the list the recognisers draw them from.

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { Matcher, type Draft } from '../../../shared-analysis/src/structures/match';
import { CircuitBuilder } from './build';
import { rng } from '../../seeded-random';

/** Transistors of both polarities on a handful of nodes, many diode-connected, sharing control nodes (seeded). */
function crowd(seed: number): Circuit {
  const random = rng(seed);
  const node = () => (random() < 0.2 ? '0' : `n${Math.floor(random() * 6)}`);
  const b = new CircuitBuilder();
  b.model('qn', 'npn').model('qp', 'pnp').model('mn', 'nmos', { KP: 1e-4, VTO: 0.5 });
  b.v('VCC', 'n0', '0', 5);
  for (let k = 0; k < 30; k++) {
    const ctrl = node();
    const out = random() < 0.4 ? ctrl : node();
    // Numbered out of element order, so name order and element order differ.
    const n = (k * 37) % 101;
    if (random() < 0.75) b.q(`Q${n}`, out, ctrl, node(), random() < 0.7 ? 'qn' : 'qp');
    else b.mos(`M${n}`, out, ctrl, node(), '0', 'mn');
    if (random() < 0.3) b.r(`R${k}`, node(), node(), 1e3 + k);
  }
  return b.build();
}

describe('Matcher.hasOffsetOutput', () => {
  it("is true exactly when the candidate list of a seed's outputs with their common terminal elsewhere is not empty, claimed devices left out (seeded)", () => {
    let seen = 0;
    for (let seed = 1; seed <= 40; seed++) {
      const m = new Matcher(crowd(seed));
      const random = rng(1000 + seed);
      // Claim a few devices as an earlier kind's draft would.
      const claimed = m.ordered.filter(() => random() < 0.2);
      m.claim({ members: claimed.map((t) => ({ t, role: 'output' })) } as unknown as Draft);
      for (const d of m.ordered) {
        // The plain path: the list `diodeOutputs`, the degenerated mirror and the self-biased loops make.
        const plain = m.candidates(d.tech, (t) => t.ctrl === d.ctrl && t.out !== d.ctrl && t.common !== d.common, [d], m.onCtrl(d.ctrl)).length > 0;
        expect(m.hasOffsetOutput(d), `${d.name} in circuit ${seed}`).toBe(plain);
        if (plain) seen++;
      }
    }
    // The circuits must give both answers many times, or the comparison proves little.
    expect(seen).toBeGreaterThan(50);
  });
});

describe('Matcher.diodeOutputs', () => {
  it('finds the twins and outputs the candidate lists give, in name order, claimed devices left out (seeded)', () => {
    let outputs = 0;
    let twins = 0;
    for (let seed = 1; seed <= 40; seed++) {
      const m = new Matcher(crowd(seed));
      const random = rng(2000 + seed);
      m.claim({ members: m.ordered.filter(() => random() < 0.2).map((t) => ({ t, role: 'output' })) } as unknown as Draft);
      for (const d of m.ordered) {
        if (d.out !== d.ctrl) continue;
        const a = d.ctrl;
        // The plain path: a candidate list for each, with every exclusion written out.
        const plainTwins = m.candidates(d.tech, (t) => t.out === a && t.ctrl === a && t.common === d.common, [d], m.onCtrl(a));
        const plainOthers = m.candidates(d.tech, (t) => t.ctrl === a && t.out !== a, [d, ...plainTwins], m.onCtrl(a));
        const got = m.diodeOutputs(d);
        expect(got.twins.map((t) => t.name), `${d.name} in circuit ${seed}`).toEqual(plainTwins.map((t) => t.name));
        // Every candidate with its emitter on the reference's, or reaching it through one resistor, in the candidates' order.
        const plainDevices = plainOthers.filter((t) => t.common === d.common || m.degeneration(t, d.common) !== undefined);
        expect(got.devices.map((t) => t.name), `${d.name} in circuit ${seed}`).toEqual(plainDevices.map((t) => t.name));
        outputs += got.outputs.length;
        twins += got.twins.length;
      }
    }
    expect(outputs).toBeGreaterThan(50);
    expect(twins).toBeGreaterThan(5);
  });
});

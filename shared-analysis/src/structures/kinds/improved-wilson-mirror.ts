// The improved (four-device) Wilson current mirror: a diode-connected device balances the lower partner's collector voltage.

import type { KindModule } from '../kind';
import type { Draft, Matcher } from '../match';
import type { Transistor } from '../topology';
import { geometricRatio } from './common';
import { analyseWilson, wilsonRo } from './wilson-mirror';

/**
 * A lower pair (D diode-connected on node B, partner N with base on B and collector on C), the
 * output O with its emitter on B and its base on A, and a diode-connected T4 on A whose emitter
 * is on C; IREF enters A.
 * ```
 *  IREF→A         IOUT
 *   T: c=b=A ─ base A: O
 *      e=C        e=B
 *   N: c=C, b=B   D: c=b=B
 *      e=rail        e=rail
 * ```
 */
function recognise(m: Matcher, d: Transistor): Draft | undefined {
  const b = d.ctrl;
  // The device above the lower diode has its common terminal on B: nothing there, nothing to look for.
  if (!m.onCommon(b)) return undefined;
  for (const n of m.lowerPartners(d)) {
    const c = n.out;
    for (const o of m.candidates(d.tech, (t) => t.common === b && t.out !== t.ctrl, [d, n], m.onCommon(b))) {
      const a = o.ctrl;
      if (a === c) continue;
      const balancing = m.candidates(d.tech, (t) => t.out === t.ctrl && t.ctrl === a && t.common === c, [d, n, o], m.onCtrl(a));
      if (balancing.length === 0) continue;
      const t4 = balancing[0];
      return {
        kind: 'improved-wilson-mirror',
        reference: t4,
        refNode: a,
        members: [
          { t: t4, role: 'reference' },
          { t: n, role: 'lower-partner' },
          { t: d, role: 'lower-diode' },
          { t: o, role: 'output' },
        ],
        outputs: [{ device: o.name, node: m.nodeName(o.out), ratio: d.scale / n.scale }],
      };
    }
  }
  return undefined;
}

export const improvedWilsonMirror: KindModule = {
  id: 'improved-wilson-mirror',
  name: 'improved Wilson current mirror',
  outputName: 'improved-Wilson output',
  summary: 'The Wilson mirror with a fourth, diode-connected device that equalises the lower pair\'s collector voltages, removing the Early error; same beta error as the Wilson.',
  technologies: ['npn', 'pnp', 'nmos', 'pmos'],
  seeds: 'diode-connected',
  recognise,
  referenceJunctions: 2,
  requiredRoles: ['lower-diode', 'lower-partner'],
  analyse: (h, iref, c) => analyseWilson(h, iref, c, true),
  outputResistance: (c, _o, out, i) => wilsonRo(c, out, i, c.withRole('lower-partner')),
  ratio: (c, o) => geometricRatio(c, o, improvedWilsonMirror.name),
  earlyInFormula: false,
  simplifications: () => 'the simplifications of the hand formula',
};

// The cascode current mirror: two stacked diode-connected devices on the reference side, the output stacked on the lower partner.

import { eng, sig } from '../format';
import { cascodeGain, thresholdWithBody, UNBOUNDED_OHMS } from '../formulas';
import { GRAY, RAZAVI, type Chain, type ChainResult, type Hand } from '../hand';
import type { KindModule } from '../kind';
import type { Draft, Matcher } from '../match';
import type { Transistor } from '../topology';
import { geometricRatio } from './common';
import { nameTable } from '../../names';

/**
 * A lower pair (D diode-connected on node B, partner N with base on B and collector on C), a
 * diode-connected top device T whose emitter is on B and whose collector and base are node A
 * (where IREF enters), and the output O with its base on A and its emitter on C.
 * ```
 *  IREF→A          IOUT
 *   T: c=b=A ─ base A: O
 *      e=B        e=C
 *   D: c=b=B ─ base B: N
 *      e=rail     c=C, e=rail
 * ```
 */
function recognise(m: Matcher, d: Transistor): Draft | undefined {
  const b = d.ctrl;
  // The device above the lower diode has its common terminal on B: nothing there, nothing to look for.
  if (!m.onCommon(b)) return undefined;
  for (const n of m.lowerPartners(d)) {
    const c = n.out;
    const tops = m.candidates(d.tech, (t) => t.out === t.ctrl && t.common === b && t.ctrl !== c, [d, n], m.onCommon(b));
    for (const top of tops) {
      const a = top.ctrl;
      const outs = m.candidates(d.tech, (t) => t.ctrl === a && t.common === c && t.out !== a, [d, n, top], m.onCtrl(a));
      if (outs.length === 0) continue;
      const o = outs[0];
      return {
        kind: 'cascode-mirror',
        reference: top,
        refNode: a,
        members: [
          { t: top, role: 'reference' },
          { t: d, role: 'lower-diode' },
          { t: n, role: 'lower-partner' },
          { t: o, role: 'output' },
        ],
        outputs: [{ device: o.name, node: m.nodeName(o.out), ratio: n.scale / d.scale }],
      };
    }
  }
  return undefined;
}

/**
 * Bipolar, by node currents: IREF = x·(1 + (1 + m)/β + m/(β + 1)), IOUT = m·x·β/(β + 1) ≈ IREF·(1 − 4/β)
 * matched (Gray et al., ch. 4). MOS: IOUT = m·IREF, the λ effect suppressed by the cascode (Razavi, ch. 5).
 */
function analyse(h: Hand, iref: number, c: Chain): ChainResult {
  const iout: Record<string, number> = nameTable();
  const edge: Record<string, number> = nameTable();
  const top = h.dev(h.s.reference.device);
  const lowerDiode = h.dev(h.role('lower-diode')[0].name);
  const x0 = h.outputs()[0];
  const m = x0.o.ratio;
  const beta = top.beta;
  if (h.bipolar) {
    const ic1 = iref / (1 + (1 + m) / beta + m / (beta + 1));
    const ie3 = ic1 * (1 + (1 + m) / beta);
    const vLow = c.junction(' (lower reference)', lowerDiode, ic1, 0);
    const vTop = c.junction(' (upper reference)', top, (ie3 * beta) / (beta + 1), 0);
    iout[x0.o.device] = cascodeGain(beta, m) * iref;
    // The output's collector must stay above its base (node A) for VBC ≤ 0.
    edge[x0.o.device] = vLow + vTop;
    c.push(() => ({
      quantity: `IOUT(${x0.o.device})`,
      formula: `m·x·β/(β + 1) with IREF = x·(1 + (1 + m)/β + m/(β + 1)) ≈ IREF·(1 − 4/β) matched (${GRAY}; node currents)`,
      substituted: `${sig(m)} × ${eng(ic1, 'A')} × ${sig(beta)}/${sig(beta + 1)}`,
      value: iout[x0.o.device],
      unit: 'A',
      devices: [x0.o.device],
    }));
    return { stack: vLow + vTop, vControl: vTop, iRef: ic1, iout, edge };
  }
  const vsb = h.vsbBase(lowerDiode);
  const vLow = c.junction(' (lower reference)', lowerDiode, iref, vsb);
  const vTop = c.junction(' (upper reference)', top, iref, vsb + vLow);
  const out = x0.p;
  const vthOut = thresholdWithBody(out.vto, out.gamma, out.phi, vsb + vLow);
  iout[x0.o.device] = m * iref;
  edge[x0.o.device] = vLow + vTop - vthOut;
  c.push(() => ({ quantity: `IOUT(${x0.o.device})`, formula: `((W/L)·M ratio) × IREF; λ effect suppressed by the cascode (${RAZAVI})`, substituted: `${sig(m)} × ${eng(iref, 'A')}`, value: iout[x0.o.device], unit: 'A', devices: [x0.o.device] }));
  return { stack: vLow + vTop, vControl: vTop, iRef: iref, iout, edge };
}

export const cascodeMirror: KindModule = {
  id: 'cascode-mirror',
  name: 'cascode current mirror',
  outputName: 'cascode output',
  summary: 'Two diode-connected devices stacked on the reference side and the output stacked on the lower partner; IOUT ≈ IREF·(1 − 4/β) bipolar, the W/L ratio for MOS, with a high output resistance.',
  technologies: ['npn', 'pnp', 'nmos', 'pmos'],
  seeds: 'diode-connected',
  recognise,
  referenceJunctions: 2,
  requiredRoles: ['lower-diode', 'lower-partner'],
  analyse,
  outputResistance: (c, _o, out, i) => {
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 (from memory). The reference-side diode returns the output's
    // base-current change too, which halves the β·ro bound of a cascode with a fixed base bias: ≈ β·ro/2 (checked
    // against the solver in the reference tests).
    if (c.bipolar) return (out.beta * out.ro) / 2;
    // Source: Razavi, ch. 5 — Rout = ro4 + ro2 + (gm4 + gmb4)·ro4·ro2, the body effect of the cascode included (from memory).
    const low = c.withRole('lower-partner');
    const ro2 = low ? c.smallSignal(low, i).ro : out.ro;
    return ro2 >= UNBOUNDED_OHMS ? UNBOUNDED_OHMS : out.ro + ro2 + (out.gm + out.gmb) * out.ro * ro2;
  },
  ratio: (c, o) => geometricRatio(c, o, cascodeMirror.name),
  earlyInFormula: false,
  simplifications: () => 'the simplifications of the hand formula',
};

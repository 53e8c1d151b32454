// The mirror with a base-current helper: an emitter (source) follower supplies the shared control node from the reference's collector.

import { eng, sig } from '../format';
import { earlyFactor, helperMirrorGain, lambdaFactor, thresholdWithBody } from '../formulas';
import { GRAY, RAZAVI, SQUARE_LAW, type Chain, type ChainResult, type Hand } from '../hand';
import type { KindModule } from '../kind';
import type { Draft, Matcher } from '../match';
import type { Transistor } from '../topology';
import { commonEmitterRo, geometricRatio } from './common';
import { nameTable } from '../../names';

/**
 * The reference R is not diode-connected; its collector A drives the base of a follower H whose
 * emitter supplies the shared base node B and whose collector sits on a rail.
 * ```
 *   IREF→A                       rail
 *        │                         │
 *   R: c=A, b=B, e=E      H: c=rail, b=A, e=B      O: c=out, b=B, e=E   (one or more O)
 * ```
 * Node B must carry no diode-connected device (that would be a Wilson-like stack). A MOS helper
 * also needs something on B that conducts at DC (a resistor or current source pulling B towards
 * the rail), since gates draw no current to bias the follower.
 */
function recognise(m: Matcher, r: Transistor): Draft | undefined {
  const a = r.out;
  const b = r.ctrl;
  if (a === b) return undefined;
  const helpers = m.candidates(r.tech, (t) => t.ctrl === a && t.common === b && t.out !== a && m.rails.has(t.out), [r], m.onCtrl(a));
  if (helpers.length === 0) return undefined;
  const diodeOnB = (m.onCtrl(b) ?? []).some((t) => t.tech === r.tech && t.out === b);
  if (diodeOnB) return undefined;
  const h = helpers[0];
  // MOS gates draw no DC current: without a pull-down on B the follower's bias is undefined.
  if (r.element.kind === 'M' && m.topo.conducting(b).filter((x) => x.element !== h.element).length === 0) return undefined;
  const outs = m.candidates(r.tech, (t) => t.ctrl === b && t.common === r.common && t.out !== b && t.out !== a, [r, h], m.onCtrl(b));
  if (outs.length === 0) return undefined;
  return {
    kind: 'helper-mirror',
    reference: r,
    refNode: a,
    members: [{ t: r, role: 'reference' }, { t: h, role: 'helper' }, ...outs.map((t) => ({ t, role: 'output' as const }))],
    outputs: outs.map((t) => ({ device: t.name, node: m.nodeName(t.out), ratio: t.scale / r.scale })),
  };
}

/**
 * Bipolar: IOUT = m·(IREF − I_pulldown/(β + 1))/(1 + (1 + Σm)/(β(β + 1))) (Gray et al., ch. 4, the
 * pull-down term by node currents). MOS: the helper carries only what the pull-downs on the gate
 * node take; the reference's VDS is VGS1 + VGS(helper), solved together with the square law.
 */
function analyse(h: Hand, iref: number, c: Chain): ChainResult {
  const iout: Record<string, number> = nameTable();
  const edge: Record<string, number> = nameTable();
  const ref = h.dev(h.s.reference.device);
  const outs = h.outputs();
  const beta = ref.beta;
  const helper = h.dev(h.role('helper')[0]?.name ?? h.s.reference.device);
  const sumM = outs.reduce((a, x) => a + x.o.ratio, 0);
  if (h.bipolar) {
    // A pull-down on the base node (a common speed-up resistor) adds to the helper's emitter
    // current, so the helper's base current, taken from IREF, grows by I_pd/(β + 1).
    let ic1 = iref / (1 + (1 + sumM) / (beta * (beta + 1)));
    let iPd = 0;
    for (let pass = 0; pass < 4; pass++) {
      iPd = h.pullDown(h.refT().ctrl, h.vbe(ref, ic1));
      ic1 = Math.max(iref - iPd / (helper.beta + 1), 0) / (1 + (1 + sumM) / (beta * (beta + 1)));
    }
    const ieH = ((1 + sumM) * ic1) / beta + iPd;
    const vbe1 = c.junction('', ref, ic1, 0);
    const vbeH = c.junction(' (helper: carries the base currents and the pull-down)', helper, (ieH * helper.beta) / (helper.beta + 1), 0);
    for (const x of outs) {
      const vce = h.outputVds(x.p.t);
      // The reference's VCE is VBE1 + VBE(helper) here, not one VBE.
      const early = vce !== undefined ? earlyFactor(vce, vbe1 + vbeH, x.p.va) : 1;
      const irefNet = iref - iPd / (helper.beta + 1);
      iout[x.o.device] = helperMirrorGain(beta, x.o.ratio, sumM) * irefNet * early;
      edge[x.o.device] = vbe1;
      c.push(() => ({
        quantity: `IOUT(${x.o.device})`,
        formula: `m·(IREF − I_pulldown/(β + 1))/(1 + (1 + Σm)/(β(β + 1)))${early !== 1 ? ' × (1 + (VCE2 − VCE1)/VA), VCE1 = VBE1 + VBE(helper)' : ''} (${GRAY}; pull-down term by node currents)`,
        substituted:
          `${sig(x.o.ratio)} × (${eng(iref, 'A')} − ${eng(iPd, 'A')}/${sig(helper.beta + 1)})/(1 + ${sig(1 + sumM)}/(${sig(beta)} × ${sig(beta + 1)}))` +
          (early !== 1 ? ` × ${sig(early, 5)}` : ''),
        value: iout[x.o.device],
        unit: 'A',
        devices: [x.o.device],
      }));
    }
    return { stack: vbe1 + vbeH, vControl: vbe1, iRef: ic1, iout, edge };
  }
  const vsb = h.vsbBase(ref);
  // Gates draw no current: the helper carries only what the pull-downs on the gate node take.
  // The reference's VDS is VGS1 + VGS(helper), so the two are solved together.
  let vgs1 = h.vgs(ref, iref, vsb);
  let vgsH = 0;
  let iH = 0;
  for (let n = 0; n < 30; n++) {
    iH = h.pullDown(h.refT().ctrl, vgs1);
    const vDrain = h.railVolts.get(helper.t.out);
    const vc = h.commonVolts();
    const g1 = vgs1;
    vgsH = h.vgsWithVds(helper, iH, vsb + vgs1, (g) => (vDrain !== undefined && vc !== undefined ? h.sign * (vDrain - vc) - g1 : g));
    const hv = vgsH;
    vgs1 = h.vgsWithVds(ref, iref, vsb, (g) => g + hv);
  }
  c.push(() => ({
    quantity: `VGS(${ref.t.name})`,
    formula: `VTH + sqrt(2·ID/(KP·W/L·M·(1 + λ·VDS))), VDS = VGS1 + VGS(helper) (${SQUARE_LAW})`,
    substituted: `${eng(thresholdWithBody(ref.vto, ref.gamma, ref.phi, vsb), 'V')} + sqrt(2 × ${eng(iref, 'A')}/${eng(ref.kBeta, 'A/V²')}/(1 + λ·${eng(vgs1 + vgsH, 'V')}))`,
    value: vgs1,
    unit: 'V',
    devices: [ref.t.name],
  }));
  c.junction(' (helper: carries the pull-down current)', helper, iH, vsb + vgs1);
  const vth1 = thresholdWithBody(ref.vto, ref.gamma, ref.phi, vsb);
  for (const x of outs) {
    const vds = h.outputVds(x.p.t);
    // The reference's VDS is VGS1 + VGS(helper).
    const clm = vds !== undefined ? lambdaFactor(x.p.lambda, vds, vgs1 + vgsH) : 1;
    iout[x.o.device] = x.o.ratio * iref * clm;
    edge[x.o.device] = vgs1 - vth1;
    c.push(() => ({
      quantity: `IOUT(${x.o.device})`,
      formula: `((W/L)·M ratio) × IREF${clm !== 1 ? ' × (1 + λ·VDS2)/(1 + λ·VDS1), VDS1 = VGS1 + VGS(helper)' : ''} (${RAZAVI})`,
      substituted: `${sig(x.o.ratio)} × ${eng(iref, 'A')}${clm !== 1 ? ` × ${sig(clm, 5)}` : ''}`,
      value: iout[x.o.device],
      unit: 'A',
      devices: [x.o.device],
    }));
  }
  return { stack: vgs1 + vgsH, vControl: vgs1, iRef: iref, iout, edge };
}

export const helperMirror: KindModule = {
  id: 'helper-mirror',
  name: 'current mirror with base-current helper',
  outputName: 'helper-mirror output',
  summary: 'The reference\'s collector (drain) drives a follower that supplies the shared control node, so the outputs\' base currents come from the rail; IOUT = IREF/(1 + 2/(β(β + 1))).',
  technologies: ['npn', 'pnp', 'nmos', 'pmos'],
  seeds: 'not-diode-connected',
  recognise,
  referenceJunctions: 2,
  requiredRoles: ['helper'],
  analyse,
  outputResistance: (_c, o, out) => commonEmitterRo(o, out),
  ratio: (c, o) => geometricRatio(c, o, helperMirror.name, (m, sumM) => `IOUT ≈ ${m}·IREF/(1 + ${sig(1 + sumM)}/(β(β + 1)))`),
  earlyInFormula: true,
  pullDownsInFormula: true,
  simplifications: () => 'the simplifications of the hand formula',
};

// The Wilson current mirror: the reference device's collector drives the output's base, whose emitter feeds the lower diode.

import { eng, sig } from '../format';
import { earlyFactor, lambdaFactor, thresholdWithBody, UNBOUNDED_OHMS, wilsonGain } from '../formulas';
import { GRAY, RAZAVI, type Chain, type ChainResult, type Hand } from '../hand';
import type { KindModule, ResistanceContext, SmallSignal } from '../kind';
import type { Draft, Matcher } from '../match';
import type { Transistor } from '../topology';
import { geometricRatio } from './common';
import { nameTable } from '../../names';

/**
 * A lower pair (D diode-connected on node B, partner N with base on B) whose partner's collector
 * is node A, where IREF enters, and drives the base of the output O, whose emitter is on B.
 * ```
 *  IREF→A        IOUT
 *   N: c=A    base A: O
 *      b=B       e=B
 *      e=rail  D: c=b=B
 *                 e=rail
 * ```
 */
function recognise(m: Matcher, d: Transistor): Draft | undefined {
  const b = d.ctrl;
  // The device above the lower diode has its common terminal on B: nothing there, nothing to look for.
  if (!m.onCommon(b)) return undefined;
  for (const n of m.lowerPartners(d)) {
    const c = n.out;
    for (const o of m.candidates(d.tech, (t) => t.common === b && t.out !== t.ctrl, [d, n], m.onCommon(b))) {
      if (o.ctrl !== c || o.out === c) continue;
      return {
        kind: 'wilson-mirror',
        reference: n,
        refNode: c,
        members: [
          { t: n, role: 'reference' },
          { t: d, role: 'lower-diode' },
          { t: o, role: 'output' },
        ],
        outputs: [{ device: o.name, node: m.nodeName(o.out), ratio: d.scale / n.scale }],
      };
    }
  }
  return undefined;
}

/**
 * Wilson and improved Wilson. Bipolar, by node currents (Gray et al., ch. 4): with x = IC2,
 * IOUT = IREF·(1 − 2/(β² + 2β + 2)) when matched; the simple Wilson also has the Early error of
 * Q1 at VCE = 2·VBE. MOS: Q1 carries IREF at VDS1 = VGS2 + VGS3 (− VGS4 improved); the lower
 * diode and output carry IOUT = m·IREF·(1 + λ·VGS2)/(1 + λ·VDS1) (Razavi, ch. 5).
 */
export function analyseWilson(h: Hand, iref: number, c: Chain, improved: boolean): ChainResult {
  const iout: Record<string, number> = nameTable();
  const edge: Record<string, number> = nameTable();
  const ref = h.dev(h.s.reference.device);
  const lowerDiode = h.dev(h.role('lower-diode')[0].name);
  const x0 = h.outputs()[0];
  const m = x0.o.ratio;
  const beta = ref.beta;
  const kindName = improved ? 'improved Wilson' : 'Wilson';
  if (h.bipolar) {
    const irefPerX = 1 / m + (1 + 1 / beta + 1 / (m * beta)) / (beta + 1);
    const x = iref / irefPerX;
    const ie3 = x * (1 + 1 / beta + 1 / (m * beta));
    const ic3 = (ie3 * beta) / (beta + 1);
    const vLow = c.junction(' (lower diode)', lowerDiode, x, 0);
    const vOut = c.junction(' (output)', x0.p, ic3, 0);
    // Simple Wilson: Q1 sits at VCE = 2·VBE against VBE for the lower diode, an Early error the improved form removes.
    const early = !improved ? earlyFactor(vLow, vLow + vOut, ref.va) : 1;
    iout[x0.o.device] = wilsonGain(beta, m * early) * iref;
    edge[x0.o.device] = vLow + vOut;
    const vRef = h.vbe(ref, x / m);
    c.push(() => ({
      quantity: `IOUT(${x0.o.device})`,
      formula: `IREF·(1 − 2/(β² + 2β + 2)) for a matched ${kindName} mirror, node currents when ratioed (${GRAY})`,
      substituted: `${eng(iref, 'A')} × (1 − 2/(${sig(beta)}² + 2 × ${sig(beta)} + 2))${m !== 1 ? ` (ratio ${sig(m)})` : ''}${early !== 1 ? ` with the lower ratio × (1 + (VBE − 2·VBE)/VA) = × ${sig(early, 5)}` : ''}`,
      value: iout[x0.o.device],
      unit: 'A',
      devices: [x0.o.device],
    }));
    return { stack: vLow + vOut, vControl: vRef, iRef: x / m, iout, edge };
  }
  const vsb = h.vsbBase(lowerDiode);
  let vLow = h.vgs(lowerDiode, m * iref, vsb);
  let vOut = h.vgs(x0.p, m * iref, vsb + vLow);
  let vTop = improved ? h.vgs(ref, iref, 0) : 0;
  let vds1 = vLow + vOut - vTop;
  let io = m * iref;
  const refIn = improved ? h.dev(h.role('lower-partner')[0].name) : ref;
  for (let n = 0; n < 40; n++) {
    const o = vOut;
    const t4 = vTop;
    vLow = h.vgsWithVds(refIn, iref, vsb, (g) => g + o - t4);
    vds1 = vLow + vOut - vTop;
    io = m * iref * lambdaFactor(lowerDiode.lambda, vLow, vds1);
    const vdsOut = h.outputVds(x0.p.t, vLow);
    vOut = h.vgsWithVds(x0.p, io, vsb + vLow, (g) => (vdsOut !== undefined ? vdsOut : g));
    if (improved) vTop = h.vgs(ref, iref, vsb + vds1);
  }
  c.junction(' (lower diode)', lowerDiode, io, vsb);
  c.junction(' (output)', x0.p, io, vsb + vLow);
  const vthOut = thresholdWithBody(x0.p.vto, x0.p.gamma, x0.p.phi, vsb + vLow);
  const clm = io / (m * iref || 1);
  iout[x0.o.device] = io;
  edge[x0.o.device] = vLow + vOut - vthOut;
  c.push(() => ({
    quantity: `IOUT(${x0.o.device})`,
    formula: `((W/L)·M ratio) × IREF × (1 + λ·VGS2)/(1 + λ·VDS1), VDS1 = VGS2 + VGS3${improved ? ' − VGS4' : ''}; feedback holds the ratio (${kindName}, ${RAZAVI})`,
    substituted: `${sig(m)} × ${eng(iref, 'A')}${clm !== 1 ? ` × ${sig(clm, 5)}` : ''}`,
    value: io,
    unit: 'A',
    devices: [x0.o.device],
  }));
  return { stack: vLow + vOut, vControl: improved ? vTop : vLow, iRef: iref, iout, edge };
}

/**
 * Output resistance of a Wilson-type output. Bipolar: ≈ β·ro/2 (Gray, Hurst, Lewis, Meyer, 5th ed.,
 * ch. 4; from memory). MOS by its small-signal loop: the input device Q1 turns the lower diode's
 * voltage change into a gate drive of the output through (ro1 ∥ R_feed):
 * Rout ≈ ro3·(1 + gm3·(gm1/gm2)·(ro1 ∥ R_feed)) (derived as in Gray et al., ch. 4 for the Wilson
 * source; a resistor feed lowers it below gm·ro²), with gm3 + gmb3 when the output's source is off its bulk.
 */
export function wilsonRo(c: ResistanceContext, out: SmallSignal, i: number, input: string | undefined): number {
  if (c.bipolar) return (out.beta * out.ro) / 2;
  const par = (a: number, b: number) => (a >= UNBOUNDED_OHMS ? b : b >= UNBOUNDED_OHMS ? a : (a * b) / (a + b));
  const diodeName = c.withRole('lower-diode');
  const q1 = input ? c.smallSignal(input, c.irefOr(i)) : out;
  const q2 = diodeName ? c.smallSignal(diodeName, i) : out;
  const loopR = par(q1.ro, c.feedOhms());
  return loopR >= UNBOUNDED_OHMS ? UNBOUNDED_OHMS : out.ro * (1 + (out.gm + out.gmb) * (q2.gm > 0 ? q1.gm / q2.gm : 1) * loopR);
}

export const wilsonMirror: KindModule = {
  id: 'wilson-mirror',
  name: 'Wilson current mirror',
  outputName: 'Wilson output',
  summary: 'Three devices: the reference device\'s collector drives the output\'s base and the output\'s emitter feeds the lower diode; IOUT = IREF·(1 − 2/(β² + 2β + 2)).',
  technologies: ['npn', 'pnp', 'nmos', 'pmos'],
  seeds: 'diode-connected',
  recognise,
  referenceJunctions: 2,
  requiredRoles: ['lower-diode'],
  analyse: (h, iref, c) => analyseWilson(h, iref, c, false),
  outputResistance: (c, _o, out, i) => wilsonRo(c, out, i, c.s.reference.device),
  ratio: (c, o) => geometricRatio(c, o, wilsonMirror.name),
  earlyInFormula: true,
  simplifications: () => 'the simplifications of the hand formula',
};

// The ΔVBE (PTAT) cell: a bipolar Widlar pair of area ratio N whose output current a mirror of the other polarity returns to its reference.

import { eng, sig } from '../format';
import { GRAY, type Chain, type ChainResult, type Hand } from '../hand';
import { degeneratedRo } from '../formulas';
import type { KindModule, ResistanceContext, SmallSignal } from '../kind';
import { closingGain, LOOP_RESISTOR, loopCoreOf, matchLoopCore, type LoopCore } from '../loops';
import type { Draft, Matcher } from '../match';
import type { Transistor } from '../topology';
import type { StructureKind, StructureOutput } from '../types';

/** Where the cell's published current formula comes from. */
export const PTAT_SOURCE = 'Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4, self-biased ΔVBE reference; from memory';

/**
 * The draft of a self-biased core on `d` (see `matchLoopCore`): reference D, output O of ratio N
 * (area × M × IS), the loop resistor R. The closing mirror stays unclaimed: it is a mirror of its own
 * (usually a simple one), recognised later and found again through the topology.
 */
export function loopDraft(m: Matcher, core: LoopCore, kind: StructureKind, extra: Draft['members'] = [], parts: Record<string, string> = {}): Draft {
  const k = core.closing.output.scale / core.closing.reference.scale;
  return {
    kind,
    reference: core.reference,
    refNode: core.reference.ctrl,
    members: [{ t: core.reference, role: 'reference' }, { t: core.output, role: 'output' }, ...extra],
    // The closing mirror forces IOUT·K = IREF: the intended ratio of the core's output is 1/K.
    outputs: [{ device: core.output.name, node: m.nodeName(core.output.out), ratio: 1 / k }],
    parts: { [core.resistor.name]: LOOP_RESISTOR, ...parts },
    params: { areaRatio: densityRatio(core.output, core.reference), closingRatio: k },
  };
}

/** N: the output's saturation current over the reference's (area × M × IS for BJTs, (W/L) × M × KP for MOS). */
export function densityRatio(out: Transistor, ref: Transistor): number {
  const p = (t: Transistor) => t.element.model.params[t.element.kind === 'Q' ? 'IS' : 'KP'];
  const a = p(out);
  const b = p(ref);
  const models = Number.isFinite(a) && Number.isFinite(b) && a > 0 && b > 0 ? a / b : 1;
  return (out.scale / ref.scale) * models;
}

function recognise(m: Matcher, d: Transistor): Draft | undefined {
  if (d.element.kind !== 'Q') return undefined;
  const core = matchLoopCore(m, d);
  return core ? loopDraft(m, core, 'ptat-cell') : undefined;
}

/** The solved bipolar loop: IC2 from the loop's own equation, and what it took. */
export interface PtatSolution {
  ic1: number;
  ic2: number;
  /** Current the closing mirror drives into the reference node (IREF). */
  iref: number;
}

/**
 * IC2 of a bipolar ΔVBE core from its loop equation. The closing mirror drives K·IC2 into node A
 * (K with its base currents, Gray et al. ch. 4), where Q1 takes its own and Q2's base current:
 * IC1 = (K·IC2 − IC2/β)/(1 + 1/β). With VBE1 = VBE2 + IE2·R and the junction law,
 * IC2·(1 + 1/β)·R = NF·VT·ln(N·IC1/IC2), so IC2 = NF·VT·ln(N·(K − 1/β)/(1 + 1/β))/((1 + 1/β)·R);
 * with infinite beta and K = 1 this is the published I = VT·ln(N)/R. No positive solution when the
 * logarithm's argument is at most 1.
 */
export function solvePtat(h: Hand, core: LoopCore, c: Chain): PtatSolution {
  const q1 = h.dev(core.reference.name);
  const q2 = h.dev(core.output.name);
  const n = q2.isEff / q1.isEff;
  const cm = closingGain(h, core.closing);
  const r = core.resistor.resistance;
  const k2 = (q2.beta + 1) / q2.beta;
  const g = (cm.gain - 1 / q2.beta) / (1 + 1 / q1.beta);
  const arg = n * g;
  let ic2 = arg > 1 && r > 0 ? (q2.nfVt * Math.log(arg)) / (k2 * r) : 0;
  // A start-up resistor (or source) into node A adds to the closing mirror's current there.
  const closingDevices = new Set([core.closing.reference.name, core.closing.output.name, ...core.closing.others.map((t) => t.name)]);
  let inj = h.injection(core.reference.ctrl, h.vbe(q1, Math.max(g * ic2, 1e-12)), closingDevices);
  if (inj.elements.length > 0 && r > 0) {
    for (let pass = 0; pass < 20; pass++) {
      const i1 = (x: number) => (cm.gain * x + inj.amps - x / q2.beta) / (1 + 1 / q1.beta);
      // IC2·(1 + 1/β)·R − NF·VT·ln(N·IC1/IC2) rises with IC2; bisection on ln(IC2).
      const f = (x: number) => x * k2 * r - q2.nfVt * Math.log(Math.max((n * i1(x)) / x, 1e-300));
      let lo = 1e-18;
      let hi = Math.max(ic2 * 4, (q2.nfVt * 40) / r);
      if (f(lo) >= 0 || f(hi) <= 0) break;
      for (let k = 0; k < 200 && hi / lo > 1 + 1e-13; k++) {
        const mid = Math.sqrt(lo * hi);
        if (f(mid) < 0) lo = mid;
        else hi = mid;
      }
      const next = Math.sqrt(lo * hi);
      const again = h.injection(core.reference.ctrl, h.vbe(q1, Math.max(i1(next), 1e-15)), closingDevices);
      const done = Math.abs(next - ic2) <= 1e-12 * next && Math.abs(again.amps - inj.amps) <= 1e-12 * Math.max(Math.abs(inj.amps), 1e-18);
      ic2 = next;
      inj = again;
      if (done) break;
    }
  } else inj = { amps: 0, elements: [] };
  const iref = cm.gain * ic2 + inj.amps;
  const ic1 = (iref - ic2 / q2.beta) / (1 + 1 / q1.beta);
  const rName = core.resistor.name;
  const injText = inj.elements.length ? ` + I(${inj.elements.join(', ')})` : '';
  c.push(() => ({
    quantity: 'N',
    formula: `IS(${core.output.name})/IS(${core.reference.name}) at temperature: area × M × IS of the output over the reference's (the density ratio of the ΔVBE pair)`,
    substituted: `${sig(q2.isEff, 4)} A/${sig(q1.isEff, 4)} A`,
    value: n,
    unit: '',
    devices: [core.reference.name, core.output.name],
  }));
  c.push(() => ({
    quantity: `IOUT(${core.output.name}), published form`,
    formula: `VT·ln(N)/${rName}: ΔVBE = VT·ln N of a pair at equal currents across the loop resistor (${PTAT_SOURCE})`,
    substituted: `${eng(h.vt, 'V', 4)} × ln(${sig(n)})/${eng(r, 'Ω')}`,
    value: n > 1 && r > 0 ? (h.vt * Math.log(n)) / r : 0,
    unit: 'A',
    devices: [core.output.name, rName],
  }));
  c.push(() => ({
    quantity: `IOUT(${core.output.name})`,
    formula:
      `IC2·(1 + 1/β)·${rName} = NF·VT·ln(N·IC1/IC2), IC1 = (K·IC2${injText} − IC2/β)/(1 + 1/β): the loop's own equation VBE1 = VBE2 + IE2·R with the closing mirror's gain ` +
      `K = ${sig(cm.ratio)}${Number.isFinite(cm.beta) ? `/(1 + ${sig(1 + cm.sum)}/β)` : ''} and the core's base currents (${GRAY}; node currents)` +
      (inj.elements.length ? `; ${inj.elements.join(', ')} adds ${eng(inj.amps, 'A')} at the reference node` : '') +
      (ic2 > 0 ? '' : `; N·(K − 1/β)/(1 + 1/β) = ${sig(arg)} ≤ 1, so the loop has no state but zero current`),
    substituted: `IC2 × ${sig(k2, 4)} × ${eng(r, 'Ω')} = ${sig(q2.nfVt, 4)} V × ln(${sig(n)} × ${eng(ic1, 'A')}/IC2)`,
    value: ic2,
    unit: 'A',
    devices: [core.output.name, rName],
  }));
  c.push(() => ({
    quantity: `TC of IOUT(${core.output.name}), ppm/°C`,
    formula: 'd(ln I)/dT = 1/T for I = VT·ln(N)/R ∝ T with a resistor of no temperature coefficient: proportional to absolute temperature',
    substituted: `1/${sig(h.at.temperatureC + 273.15, 5)} K`,
    value: 1e6 / (h.at.temperatureC + 273.15),
    unit: '',
    devices: [core.output.name],
  }));
  c.push(() => ({
    quantity: 'IREF',
    formula: `the closing mirror's output into the reference node, K·IOUT${injText} (${GRAY})`,
    substituted: `${sig(cm.gain, 5)} × ${eng(ic2, 'A')}${inj.elements.length ? ` + ${eng(inj.amps, 'A')}` : ''}`,
    value: iref,
    unit: 'A',
  }));
  return { ic1, ic2, iref };
}

/** The core at a given IREF (into node A): IC2 = IREF/K, IC1 = (IREF − IC2/β)/(1 + 1/β), VBE1 the reference-chain voltage. */
export function analysePtat(h: Hand, iref: number, c: Chain): ChainResult {
  const core = loopCoreOf(h)!;
  const q1 = h.dev(core.reference.name);
  const q2 = h.dev(core.output.name);
  const cm = closingGain(h, core.closing);
  // IREF includes what a start-up resistor adds at node A; IC2 is what the loop equation gave.
  const ic2 = h.memo.get('ic2') ?? (cm.gain > 0 ? iref / cm.gain : 0);
  const ic1 = Math.max((iref - ic2 / q2.beta) / (1 + 1 / q1.beta), 0);
  const vbe1 = c.junction('', q1, ic1, 0);
  return { stack: vbe1, vControl: vbe1, iRef: ic1, iout: { [core.output.name]: ic2 }, edge: { [core.output.name]: vbe1 } };
}

/**
 * Output resistance of the core's output with its loop resistor as emitter (source) degeneration:
 * ro·(1 + gm·(R∥rπ)) + R∥rπ (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 3/4; from memory).
 */
export function loopOutputRo(c: ResistanceContext, o: StructureOutput, out: SmallSignal): number {
  const r = Object.entries(c.s.parts ?? {}).find(([, role]) => role === LOOP_RESISTOR)?.[0];
  const ohms = r ? c.resistance(r) : 0;
  return ohms > 0 ? degeneratedRo(out.ro, out.gm + out.gmb, ohms, out.rpi) : out.ro;
}

export const ptatCell: KindModule = {
  id: 'ptat-cell',
  name: 'ΔVBE (PTAT) cell',
  outputName: 'PTAT output',
  summary:
    'A bipolar pair of density ratio N (area, `M=` or IS), the larger with an emitter resistor R, in a loop closed by a mirror of the other polarity; I = VT·ln(N)/R, proportional to absolute temperature (about +3300 ppm/°C at room temperature).',
  technologies: ['npn', 'pnp'],
  seeds: 'diode-connected',
  recognise,
  referenceJunctions: 1,
  complete: (h) => loopCoreOf(h) !== undefined,
  ownReference: (h, c) => {
    const x = solvePtat(h, loopCoreOf(h)!, c);
    h.memo.set('ic2', x.ic2);
    return x.iref;
  },
  analyse: analysePtat,
  outputResistance: loopOutputRo,
  ratio: () => undefined,
  earlyInFormula: false,
  simplifications: () => 'the ΔVBE equation neglects the Early effect of the pair and of the closing mirror (their collector voltages differ)',
};

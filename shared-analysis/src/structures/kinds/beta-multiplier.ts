// The MOS self-biased (beta-multiplier) reference: a square-law Widlar pair of width ratio K in a loop closed by a mirror of the other polarity.

import { eng, sig } from '../format';
import { thresholdWithBody } from '../formulas';
import { RAZAVI, SQUARE_LAW, type Chain, type ChainResult, type Hand } from '../hand';
import type { KindModule } from '../kind';
import { closingGain, loopCoreOf, matchLoopCore } from '../loops';
import type { Draft, Matcher } from '../match';
import type { Transistor } from '../topology';
import { loopDraft, loopOutputRo } from './ptat-cell';

/** Where the published current formula comes from. */
export const BETA_MULTIPLIER_SOURCE = 'Razavi, Design of Analog CMOS Integrated Circuits, ch. 12, supply-independent biasing; from memory';

function recognise(m: Matcher, d: Transistor): Draft | undefined {
  if (d.element.kind !== 'M') return undefined;
  const core = matchLoopCore(m, d);
  return core ? loopDraft(m, core, 'beta-multiplier') : undefined;
}

/**
 * ID2 from the loop's own equation VGS1(ID1) = VGS2(ID2) + ID2·R with ID1 = Kc·ID2 (Kc: the closing
 * mirror's gain), the square law with M2's threshold raised by its source voltage (body effect).
 * With Kc = 1 and no body effect the root is the published I = 2/(β1·R²)·(1 − 1/√K)², K = β2/β1.
 * The residual is negative just above zero current when the loop has a non-zero state (√(Kc·β2/β1) > 1)
 * and rises without bound, so the root is bracketed and found by bisection on ln(ID2).
 */
function loopCurrent(h: Hand, c: Chain): number {
  const core = loopCoreOf(h)!;
  const m1 = h.dev(core.reference.name);
  const m2 = h.dev(core.output.name);
  const r = core.resistor.resistance;
  const cm = closingGain(h, core.closing);
  const vsb0 = h.vsbBase(m1);
  const k = m2.kBeta / m1.kBeta;
  const published = k > 1 && r > 0 ? (2 / (m1.kBeta * r * r)) * (1 - 1 / Math.sqrt(k)) ** 2 : 0;
  // A start-up resistor (or source) into node A adds to the closing mirror's current there.
  const closingDevices = new Set([core.closing.reference.name, core.closing.output.name, ...core.closing.others.map((t) => t.name)]);
  let inj = 0;
  let injElements: string[] = [];
  let id2 = 0;
  for (let pass = 0; pass < 20; pass++) {
    const g = (i: number) => h.vgs(m2, i, vsb0 + i * r) + i * r - h.vgs(m1, cm.gain * i + inj, vsb0);
    let next = 0;
    const start = published > 0 ? published : 1e-6;
    let lo = start * 1e-9;
    let hi = start;
    if (g(lo) < 0) {
      for (let n = 0; n < 80 && g(hi) < 0; n++) hi *= 2;
      if (g(hi) >= 0) {
        for (let n = 0; n < 200 && hi - lo > 1e-13 * hi; n++) {
          const mid = Math.sqrt(lo * hi);
          if (g(mid) < 0) lo = mid;
          else hi = mid;
        }
        next = Math.sqrt(lo * hi);
      }
    }
    const injNow = h.injection(core.reference.ctrl, h.vgs(m1, cm.gain * next + inj, vsb0), closingDevices);
    const done = Math.abs(next - id2) <= 1e-12 * Math.max(next, 1e-18) && Math.abs(injNow.amps - inj) <= 1e-12 * Math.max(Math.abs(inj), 1e-18);
    id2 = next;
    inj = injNow.amps;
    injElements = injNow.elements;
    if (done || injElements.length === 0) break;
  }
  const injText = injElements.length ? ` + I(${injElements.join(', ')})` : '';
  const rName = core.resistor.name;
  c.push(() => ({
    quantity: 'K',
    formula: `(W/L)·M·KP of ${core.output.name} over ${core.reference.name}: the beta ratio of the pair`,
    substituted: `${eng(m2.kBeta, 'A/V²')}/${eng(m1.kBeta, 'A/V²')}`,
    value: k,
    unit: '',
    devices: [core.reference.name, core.output.name],
  }));
  c.push(() => ({
    quantity: `IOUT(${core.output.name}), published form`,
    formula: `2/(β1·${rName}²)·(1 − 1/√K)², β1 = KP·(W/L)·M of ${core.reference.name}, body effect neglected (${BETA_MULTIPLIER_SOURCE})`,
    substituted: `2/(${eng(m1.kBeta, 'A/V²')} × (${eng(r, 'Ω')})²) × (1 − 1/√${sig(k)})²`,
    value: published,
    unit: 'A',
    devices: [core.output.name, rName],
  }));
  c.push(() => ({
    quantity: `IOUT(${core.output.name})`,
    formula:
      `VGS1(Kc·ID2${injText}) = VGS2(ID2) + ID2·${rName} with VGS = VTH(VSB) + sqrt(2·ID/(KP·W/L·M)): the loop's own equation, ` +
      `Kc = ${sig(cm.gain, 4)} the closing mirror's gain, ${core.output.name}'s threshold raised by its source voltage (${SQUARE_LAW}; ${RAZAVI})` +
      (injElements.length ? `; ${injElements.join(', ')} adds ${eng(inj, 'A')} at the reference node` : '') +
      (id2 > 0 ? '' : '; the residual is not negative above zero current, so the loop has no state but zero current'),
    substituted: `${eng(h.vgs(m1, cm.gain * id2 + inj, vsb0), 'V')} = ${eng(h.vgs(m2, id2, vsb0 + id2 * r), 'V')} + ${eng(id2, 'A')} × ${eng(r, 'Ω')}`,
    value: id2,
    unit: 'A',
    devices: [core.output.name, rName],
  }));
  const iref = cm.gain * id2 + inj;
  h.memo.set('id2', id2);
  c.push(() => ({
    quantity: 'IREF',
    formula: `the closing mirror's output into the reference node, Kc·IOUT${injText}`,
    substituted: `${sig(cm.gain, 5)} × ${eng(id2, 'A')}${injElements.length ? ` + ${eng(inj, 'A')}` : ''}`,
    value: iref,
    unit: 'A',
  }));
  return iref;
}

/** The core at a given IREF: ID1 = IREF (gates draw nothing), ID2 = IREF/Kc; VGS1 the reference-chain voltage. */
function analyse(h: Hand, iref: number, c: Chain): ChainResult {
  const core = loopCoreOf(h)!;
  const m1 = h.dev(core.reference.name);
  const vsb0 = h.vsbBase(m1);
  const cm = closingGain(h, core.closing);
  const id2 = h.memo.get('id2') ?? (cm.gain > 0 ? iref / cm.gain : 0);
  const vgs1 = c.junction('', m1, iref, vsb0);
  const vth1 = thresholdWithBody(m1.vto, m1.gamma, m1.phi, vsb0);
  return { stack: vgs1, vControl: vgs1, iRef: iref, iout: { [core.output.name]: id2 }, edge: { [core.output.name]: vgs1 - vth1 } };
}

export const betaMultiplier: KindModule = {
  id: 'beta-multiplier',
  name: 'self-biased MOS (beta-multiplier) reference',
  outputName: 'beta-multiplier output',
  summary:
    'A MOS pair whose wider device (beta ratio K) has a source resistor R, in a loop closed by a mirror of the other polarity; I = 2/(β·R²)·(1 − 1/√K)², independent of the supply.',
  technologies: ['nmos', 'pmos'],
  seeds: 'diode-connected',
  recognise,
  referenceJunctions: 1,
  complete: (h) => loopCoreOf(h) !== undefined,
  ownReference: loopCurrent,
  analyse,
  outputResistance: loopOutputRo,
  ratio: () => undefined,
  earlyInFormula: false,
  simplifications: () => 'the loop equation neglects channel-length modulation (the pair and the closing mirror sit at different VDS)',
};

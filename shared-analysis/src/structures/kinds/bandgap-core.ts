// The bandgap core: a ΔVBE cell whose PTAT current, mirrored into a resistor on a diode-connected device, gives VBG = VBE + I·R2.

import type { Diode } from '../../circuit';
import { eng, sig } from '../format';
import { isAtTemperature } from '../formulas';
import { GRAY, type Chain, type ChainResult, type Hand } from '../hand';
import type { KindModule } from '../kind';
import { closingGain, loopCoreOf, matchLoopCore, type LoopCore } from '../loops';
import type { Draft, Matcher } from '../match';
import { polaritySign, type Transistor } from '../topology';
import { analysePtat, loopDraft, loopOutputRo, solvePtat } from './ptat-cell';
import { cardTnomC } from '../../devices/physics';

/** Where the bandgap formulas come from. */
export const BANDGAP_SOURCE = 'Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4, bandgap-referenced bias; from memory';
/** `parts` roles of the output branch. */
const R2_ROLE = 'output-branch resistor (turns the PTAT current into a voltage)';
const DIODE_ROLE = 'output-branch diode (adds its VBE)';

/** The output branch: a closing-mirror output into node G, R2 from G to Y, and a diode-connected device (or a diode) from Y to the core's rail. */
interface Branch {
  source: Transistor;
  g: number;
  r2: string;
  vbe: { transistor: Transistor } | { diode: Diode };
}

function findBranch(m: Matcher, core: LoopCore): Branch | undefined {
  const rail = core.reference.common;
  const sign = polaritySign(core.reference.tech);
  for (const src of core.closing.others) {
    const g = src.out;
    const onG = m.topo.conducting(g).filter((a) => a.element !== src.element);
    if (onG.length !== 1 || onG[0].element.kind !== 'R') continue;
    const r2 = onG[0].element;
    const y = r2.nodes[0] === g ? r2.nodes[1] : r2.nodes[0];
    const onY = [...new Set(m.topo.conducting(y).filter((a) => a.element !== r2).map((a) => a.element))];
    if (onY.length !== 1) continue;
    const el = onY[0];
    if (el.kind === 'Q' || el.kind === 'M') {
      const t = m.topo.byName.get(el.name);
      if (t && t.tech === core.reference.tech && t.element.kind === 'Q' && t.out === y && t.ctrl === y && t.common === rail && !m.isClaimed(t)) {
        return { source: src, g, r2: r2.name, vbe: { transistor: t } };
      }
    } else if (el.kind === 'D') {
      // Anode towards the branch for an NPN core (current flows down to the rail), cathode for a PNP core.
      const [an, ca] = el.nodes;
      if ((sign > 0 && an === y && ca === rail) || (sign < 0 && ca === y && an === rail)) return { source: src, g, r2: r2.name, vbe: { diode: el } };
    }
  }
  return undefined;
}

function recognise(m: Matcher, d: Transistor): Draft | undefined {
  if (d.element.kind !== 'Q') return undefined;
  const core = matchLoopCore(m, d);
  if (!core) return undefined;
  const br = findBranch(m, core);
  if (!br) return undefined;
  const extra = 'transistor' in br.vbe ? [{ t: br.vbe.transistor, role: 'vbe' as const }] : [];
  const parts: Record<string, string> = { [br.r2]: R2_ROLE };
  if ('diode' in br.vbe) parts[br.vbe.diode.name] = DIODE_ROLE;
  const draft = loopDraft(m, core, 'bandgap-core', extra, parts);
  draft.params = { ...draft.params, branchRatio: br.source.scale / core.closing.reference.scale };
  draft.voltages = [{ name: 'VBG', description: 'bandgap voltage, VBE + (R2/R)·VT·ln(N)-type sum', node: m.nodeName(br.g), from: m.nodeName(core.reference.common) }];
  return draft;
}

/** The branch again, from the recognised structure. */
function branchOf(h: Hand, core: LoopCore): Branch | undefined {
  const r2 = Object.entries(h.s.parts ?? {}).find(([, role]) => role === R2_ROLE)?.[0];
  const r2El = r2 ? h.topo.elementByName.get(r2) : undefined;
  if (!r2El || r2El.kind !== 'R') return undefined;
  const vbeT = h.role('vbe')[0];
  const diodeName = Object.entries(h.s.parts ?? {}).find(([, role]) => role === DIODE_ROLE)?.[0];
  const diode = diodeName ? h.topo.elementByName.get(diodeName) : undefined;
  for (const src of core.closing.others) {
    if (!r2El.nodes.includes(src.out)) continue;
    if (vbeT) return { source: src, g: src.out, r2: r2El.name, vbe: { transistor: vbeT } };
    if (diode && diode.kind === 'D') return { source: src, g: src.out, r2: r2El.name, vbe: { diode } };
  }
  return undefined;
}

/** Junction voltage of the branch's VBE device at current `i`, with its NF (N for a diode), EG and XTI. */
function branchJunction(h: Hand, br: Branch, i: number): { v: number; nf: number; eg: number; xti: number; name: string; formula: string } {
  if ('transistor' in br.vbe) {
    const p = h.dev(br.vbe.transistor.name);
    const ic = (i * p.beta) / (p.beta + 1);
    const get = (k: string, d: number) => (Number.isFinite(p.model.params[k]) ? p.model.params[k] : d);
    return { v: h.vbe(p, ic), nf: p.nfVt / h.vt, eg: get('EG', 1.11), xti: get('XTI', 3), name: p.t.name, formula: `NF·VT·ln(IC3/IS3 + 1), IC3 = I3·β/(β + 1)` };
  }
  const d = br.vbe.diode;
  const mp = d.model.params;
  const n = mp.N > 0 ? mp.N : 1;
  const eg = Number.isFinite(mp.EG) ? mp.EG : 1.11;
  const xti = Number.isFinite(mp.XTI) ? mp.XTI : 3;
  // Diode IS(T) uses XTI/N and EG/N (the diode law of docs/DEVICE-MODELS.md), area × M scaling.
  const is = isAtTemperature((mp.IS > 0 ? mp.IS : 1e-14) * (d.area > 0 ? d.area : 1) * (d.m > 0 ? d.m : 1), h.at.temperatureC, cardTnomC(mp, h.circuit.tnomC), xti / n, eg / n);
  return { v: n * h.vt * Math.log(i / is + 1), nf: 1, eg: eg / n, xti: xti / n, name: d.name, formula: 'N·VT·ln(I3/IS + 1) (diode law)' };
}

/**
 * VBG = VBE3(I3) + I3·R2 above the core's rail, I3 = the branch output's share of the closing mirror
 * (its ratio over the mirror's base-current denominator). With I3 ∝ T and the IS(T) law of docs/DEVICE-MODELS.md:
 * dVBG/dT = (VBG − NF·EG − NF·(XTI − 1)·VT)/T, so the zero-TC point is VBG = NF·(EG + (XTI − 1)·VT) and
 * R2 for zero TC = (that − VBE3)/I3 (Gray et al., ch. 4, VBG ≈ VG0 + (η − α)·VT; from memory).
 */
function voltages(h: Hand, state: ChainResult, c: Chain): Record<string, { volts: number; tempcoPpmPerC?: number }> {
  const core = loopCoreOf(h)!;
  const br = branchOf(h, core);
  const vc = h.commonVolts();
  if (!br || vc === undefined) return {};
  const cm = closingGain(h, core.closing);
  const ratio3 = br.source.scale / core.closing.reference.scale;
  const gain3 = Number.isFinite(cm.beta) ? ratio3 / (1 + (1 + cm.sum) / cm.beta) : ratio3;
  const ic2 = state.iout[core.output.name] ?? 0;
  const i3 = gain3 * ic2;
  const r2El = h.topo.elementByName.get(br.r2);
  const r2 = r2El && r2El.kind === 'R' ? r2El.resistance : 0;
  const j = branchJunction(h, br, i3);
  const above = j.v + i3 * r2;
  const vbg = vc + h.sign * above;
  const t = h.at.temperatureC + 273.15;
  const zeroTc = j.nf * (j.eg + (j.xti - 1) * h.vt);
  const tcV = (above - zeroTc) / t;
  const r2Zero = i3 > 0 ? (zeroTc - j.v) / i3 : 0;
  const node = h.s.voltages?.[0]?.node ?? h.topo.nodeName(br.g);
  c.push(() => ({
    quantity: `I3 (${br.source.name})`,
    formula: `the output branch's share of the PTAT current: ratio ${sig(ratio3)}${Number.isFinite(cm.beta) ? `/(1 + ${sig(1 + cm.sum)}/β)` : ''} × IOUT (${GRAY})`,
    substituted: `${sig(gain3, 5)} × ${eng(ic2, 'A')}`,
    value: i3,
    unit: 'A',
    devices: [br.source.name],
  }));
  c.push(() => ({
    quantity: `VBE(${j.name})`,
    formula: `${j.formula} (junction law)`,
    substituted: `at ${eng(i3, 'A')}`,
    value: j.v,
    unit: 'V',
    devices: [j.name],
  }));
  c.push(() => ({
    quantity: 'VBG',
    formula: `VBE3 + I3·R2 = VBE3 + (R2/R)·(ratio)·VT·ln(N): a junction voltage plus a PTAT drop, ${h.sign > 0 ? 'above' : 'below'} the core's rail, so V(${node}) = ${eng(vbg, 'V')} (${BANDGAP_SOURCE})`,
    substituted: `${eng(j.v, 'V')} + ${eng(i3, 'A')} × ${eng(r2, 'Ω')}`,
    value: above,
    unit: 'V',
    devices: [br.source.name, br.r2, j.name],
  }));
  c.push(() => ({
    quantity: 'dVBG/dT, mV/°C',
    formula: `(VBG − NF·EG − NF·(XTI − 1)·VT)/T with I3 ∝ T and IS(T) ∝ T^XTI·exp(−EG/VT) (${BANDGAP_SOURCE})`,
    substituted: `(${eng(above, 'V')} − ${eng(zeroTc, 'V')})/${sig(t, 5)} K`,
    value: tcV * 1e3,
    unit: '',
    devices: [br.r2],
  }));
  c.push(() => ({
    quantity: 'TC of VBG, ppm/°C',
    formula: 'dVBG/dT over VBG (above the rail)',
    substituted: `${eng(tcV, 'V')}/K / ${eng(above, 'V')}`,
    value: above !== 0 ? (tcV / above) * 1e6 : 0,
    unit: '',
    devices: [br.r2],
  }));
  c.push(() => ({
    quantity: `${br.r2} for zero TC`,
    formula: `(NF·(EG + (XTI − 1)·VT) − VBE3)/I3: the value that puts VBG at the zero-TC point ${eng(zeroTc, 'V')} (${BANDGAP_SOURCE})`,
    substituted: `(${eng(zeroTc, 'V')} − ${eng(j.v, 'V')})/${eng(i3, 'A')}`,
    value: r2Zero,
    unit: 'Ω',
    devices: [br.r2],
  }));
  return { VBG: { volts: above, tempcoPpmPerC: above !== 0 ? (tcV / above) * 1e6 : undefined } };
}

export const bandgapCore: KindModule = {
  id: 'bandgap-core',
  name: 'bandgap core',
  outputName: 'PTAT output',
  summary:
    'A ΔVBE cell plus a further output of its closing mirror into R2 on a diode-connected device (or diode): VBG = VBE + I·R2, with its value, drift across the temperature corners and the R2 that zeroes its temperature coefficient, shown on the output node.',
  technologies: ['npn', 'pnp'],
  seeds: 'diode-connected',
  recognise,
  referenceJunctions: 1,
  complete: (h) => {
    const core = loopCoreOf(h);
    return core !== undefined && branchOf(h, core) !== undefined;
  },
  ownReference: (h, c) => {
    const x = solvePtat(h, loopCoreOf(h)!, c);
    h.memo.set('ic2', x.ic2);
    return x.iref;
  },
  analyse: analysePtat,
  voltages,
  outputResistance: loopOutputRo,
  ratio: () => undefined,
  earlyInFormula: false,
  simplifications: () => 'the ΔVBE and bandgap equations neglect the Early effect and the base currents of the output branch',
};

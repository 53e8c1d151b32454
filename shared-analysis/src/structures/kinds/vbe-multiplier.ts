// The VBE (VGS) multiplier: a device whose base sits on a divider from its collector to its emitter, so V = VBE·(1 + R1/R2).

import { nameTable } from '../../names';
import { eng, sig } from '../format';
import type { Chain, ChainResult, Hand } from '../hand';
import type { KindModule } from '../kind';
import type { Draft, Matcher } from '../match';
import type { Element } from '../../circuit';
import type { Transistor } from '../topology';

/** Where the formula comes from. */
export const MULTIPLIER_SOURCE = 'Gray, Hurst, Lewis, Meyer, 5th ed., ch. 5, class AB output-stage bias; Horowitz and Hill, 3rd ed., ch. 2; from memory';
const R1_ROLE = 'upper divider resistor (collector to base)';
const R2_ROLE = 'lower divider resistor (base to emitter)';

/**
 * A transistor whose base (gate) node B carries only its base and two resistors: R1 to its own
 * collector C and R2 to its own emitter E.
 * ```
 *   I→C ── R1 ── B ── R2 ── E
 *   Q: c=C, b=B, e=E
 * ```
 */
function recognise(m: Matcher, t: Transistor): Draft | undefined {
  const b = t.ctrl;
  const c = t.out;
  const e = t.common;
  if (b === c || b === e || c === e) return undefined;
  // The elements on the base node besides the device (each once, in order): a divider has exactly two.
  const others: Element[] = [];
  for (const a of m.topo.conducting(b)) {
    if (a.element === t.element || others.includes(a.element)) continue;
    if (others.length === 2) return undefined;
    others.push(a.element);
  }
  if (others.length !== 2 || others.some((x) => x.kind !== 'R' || !(x.resistance > 0))) return undefined;
  const far = (r: (typeof others)[number]) => (r.nodes[0] === b ? r.nodes[1] : r.nodes[0]);
  const r1 = others.find((r) => far(r) === c);
  const r2 = others.find((r) => far(r) === e);
  if (!r1 || !r2 || r1 === r2) return undefined;
  const v = t.element.kind === 'Q' ? 'VCE' : 'VDS';
  return {
    kind: 'vbe-multiplier',
    reference: t,
    refNode: c,
    members: [{ t, role: 'pass' }],
    outputs: [],
    parts: { [r1.name]: R1_ROLE, [r2.name]: R2_ROLE },
    voltages: [{ name: v, description: `${t.element.kind === 'Q' ? 'VBE' : 'VGS'} multiplier voltage, ${t.element.kind === 'Q' ? 'VBE' : 'VGS'}·(1 + R1/R2)`, node: m.nodeName(c), from: m.nodeName(e) }],
  };
}

function divider(h: Hand): { r1: number; r2: number; r1Name: string; r2Name: string } {
  const parts = Object.entries(h.s.parts ?? {});
  const r = (role: string) => {
    const name = parts.find(([, x]) => x === role)?.[0] ?? '';
    const el = h.topo.elementByName.get(name);
    return { name, ohms: el && el.kind === 'R' ? el.resistance : 0 };
  };
  const a = r(R1_ROLE);
  const b = r(R2_ROLE);
  return { r1: a.ohms, r2: b.ohms, r1Name: a.name, r2Name: b.name };
}

/**
 * At a current I into the collector node: I = IC + I(R1), I(R1) = VBE/R2 + IB, solved for IC by
 * bisection (the left side rises with IC); V = VBE·(1 + R1/R2) + IB·R1. MOS: no gate current,
 * V = VGS·(1 + R1/R2).
 */
function analyse(h: Hand, iref: number, c: Chain): ChainResult {
  const p = h.dev(h.s.reference.device);
  const { r1, r2 } = divider(h);
  const beta = h.bipolar ? p.beta : Infinity;
  const vCtl = (i: number) => (h.bipolar ? h.vbe(p, i) : h.vgs(p, i, h.vsbBase(p)));
  const g = (ic: number) => ic * (1 + 1 / beta) + vCtl(ic) / r2 - iref;
  let lo = 0;
  let hi = Math.max(iref, 0);
  let ic = 0;
  if (iref > 0 && r2 > 0 && g(hi) > 0) {
    if (g(lo) >= 0) ic = 0;
    else {
      for (let n = 0; n < 200 && hi - lo > 1e-15 * hi; n++) {
        const mid = 0.5 * (lo + hi);
        if (g(mid) > 0) hi = mid;
        else lo = mid;
      }
      ic = 0.5 * (lo + hi);
    }
  }
  const vbe = c.junction(' (what is left after the divider takes about VBE/R2)', p, ic, h.bipolar ? 0 : h.vsbBase(p));
  const v = vbe * (1 + r1 / r2) + (h.bipolar ? (ic / beta) * r1 : 0);
  return { stack: v, vControl: vbe, iRef: ic, iout: nameTable(), edge: nameTable() };
}

/**
 * V = VBE·(1 + R1/R2) + IB·R1 (Gray et al., ch. 5; Horowitz and Hill, ch. 2). Its drift at a constant
 * collector current is (1 + R1/R2)·dVBE/dT with dVBE/dT = (VBE − NF·EG − NF·XTI·VT)/T from the IS(T) law
 * of DESIGN (about −2 mV/°C per VBE, Horowitz and Hill, common practice).
 */
function voltages(h: Hand, state: ChainResult, c: Chain): Record<string, { volts: number; tempcoPpmPerC?: number }> {
  const { r1, r2, r1Name, r2Name } = divider(h);
  const name = h.s.voltages?.[0]?.name ?? 'VCE';
  const ctl = h.bipolar ? 'VBE' : 'VGS';
  const k = 1 + r1 / r2;
  const p = h.dev(h.s.reference.device);
  const ib = h.bipolar ? state.iRef / p.beta : 0;
  c.push(() => ({
    quantity: name,
    formula: `${ctl}·(1 + ${r1Name}/${r2Name})${h.bipolar ? ` + IB·${r1Name}` : ''}: the divider holds ${ctl} across ${r2Name}, and ${r1Name} carries the same current (${MULTIPLIER_SOURCE})`,
    substituted: `${eng(state.vControl, 'V')} × (1 + ${eng(r1, 'Ω')}/${eng(r2, 'Ω')})${h.bipolar ? ` + ${eng(ib, 'A')} × ${eng(r1, 'Ω')}` : ''}`,
    value: state.stack,
    unit: 'V',
    devices: [h.s.reference.device, r1Name, r2Name],
  }));
  if (!h.bipolar) return { [name]: { volts: state.stack } };
  const get = (key: string, d: number) => (Number.isFinite(p.model.params[key]) ? p.model.params[key] : d);
  const nf = p.nfVt / h.vt;
  const t = h.at.temperatureC + 273.15;
  const dVbe = (state.vControl - nf * get('EG', 1.11) - nf * get('XTI', 3) * h.vt) / t;
  const dV = k * dVbe;
  c.push(() => ({
    quantity: `d${name}/dT, mV/°C`,
    formula: `(1 + R1/R2)·dVBE/dT, dVBE/dT = (VBE − NF·EG − NF·XTI·VT)/T at a constant collector current (IS(T) law; about −2 mV/°C per VBE, Horowitz and Hill, 3rd ed., ch. 2, common practice)`,
    substituted: `${sig(k, 4)} × (${eng(state.vControl, 'V')} − ${sig(nf * get('EG', 1.11), 4)} V − ${sig(nf * get('XTI', 3), 3)} × ${eng(h.vt, 'V', 4)})/${sig(t, 5)} K`,
    value: dV * 1e3,
    unit: '',
    devices: [h.s.reference.device],
  }));
  return { [name]: { volts: state.stack, tempcoPpmPerC: state.stack !== 0 ? (dV / state.stack) * 1e6 : undefined } };
}

export const vbeMultiplier: KindModule = {
  id: 'vbe-multiplier',
  name: 'VBE multiplier',
  outputName: 'multiplier output',
  summary:
    'A transistor whose base (gate) sits on a divider R1 (to its collector) and R2 (to its emitter), so it holds V = VBE·(1 + R1/R2) across itself (VGS for MOS); the voltage, its corner spread and drift are shown on its collector node.',
  technologies: ['npn', 'pnp', 'nmos', 'pmos'],
  seeds: 'not-diode-connected',
  recognise,
  referenceJunctions: 1,
  voltageOnly: true,
  complete: (h) => {
    const d = divider(h);
    return d.r1 > 0 && d.r2 > 0;
  },
  analyse,
  stackFormula: (h, vName) => `${vName}·(1 + R1/R2)${h.bipolar ? ' + IB·R1' : ''}`,
  shortcut: (h, x) => {
    const { r1, r2 } = divider(h);
    const k = 1 + r1 / r2;
    return {
      quantity: 'IREF (0.7 V shortcut)',
      formula: '(V+ − V− − 0.7 V·(1 + R1/R2))/R (common practice)',
      substituted: `(${x.supplyText} − ${eng(0.7 * k, 'V')})/${eng(x.ohms, 'Ω')}`,
      value: Math.max((x.available - 0.7 * k) / x.ohms, 0),
      unit: 'A',
    };
  },
  voltages,
  outputResistance: (_c, _o, out) => out.ro,
  ratio: () => undefined,
  earlyInFormula: false,
  simplifications: () => 'the multiplier formula neglects the Early effect of the pass device',
};

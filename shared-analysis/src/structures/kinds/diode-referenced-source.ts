// The diode-referenced current source: a transistor whose base (gate) sits on a zener or a string of forward junctions to a rail, with an emitter (source) resistor to the same rail; I = (VREF − VBE)/RE.

import type { Diode, Element } from '../../circuit';
import { nameTable } from '../../names';
import { eng, sig } from '../format';
import { isAtTemperature, thresholdWithBody } from '../formulas';
import { solveRising, type Chain, type ChainResult, type Hand } from '../hand';
import type { KindModule } from '../kind';
import type { Draft, Matcher } from '../match';
import { polaritySign, type Transistor } from '../topology';
import type { StructureRole } from '../types';
import { commonEmitterRo } from './common';
import { cardTnomC } from '../../devices/physics';

/** Where the formula comes from. */
export const DIODE_SOURCE = 'Horowitz and Hill, 3rd ed., ch. 2 (zener- and diode-biased transistor current source); Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4; from memory';

/** The roles of the string's parts, as `parts` records them. */
const ZENER = 'zener reference';
const FORWARD = 'forward diode of the reference string';
const EMITTER = 'emitter (source) resistor that sets the current';

/** The `Hand.memo` key of the string's current at the recorded evaluation. */
const STRING_CURRENT = 'diode-referenced string current';

/** Longest reference string followed (junctions in series). */
const MAX_STRING = 6;

/** One element of the reference string, from the base (gate) node towards the rail. */
interface StringPart {
  element: Element;
  /** 'zener': a diode in reverse breakdown; 'forward': a forward junction (a diode or a diode-connected transistor). */
  how: 'zener' | 'forward';
}

/**
 * A transistor Q (not diode-connected) whose emitter node carries only Q and one resistor RE to a
 * rail R, and whose base node B reaches R through a string of one zener and/or forward junctions
 * (diodes or diode-connected transistors of Q's technology, each intermediate node carrying only its
 * two neighbours), besides the feed that biases the string (a resistor or a current source):
 * ```
 *   feed → B ── string (zener and/or ≥ 2 forward junctions) ── R
 *   Q: c = OUT, b = B, e = E;  RE: E ── R
 * ```
 * A single forward junction is not this kind: with a diode-connected transistor it is a Widlar source.
 */
function recognise(m: Matcher, t: Transistor): Draft | undefined {
  const b = t.ctrl;
  const e = t.common;
  if (b === t.out || b === e || t.out === e) return undefined;
  const reSole = m.topo.soleOther(e, (el) => el === t.element);
  if (!reSole || reSole.element.kind !== 'R' || !(reSole.element.resistance > 0) || !Number.isFinite(reSole.element.resistance)) return undefined;
  const re = reSole.element;
  const rail = re.nodes[0] === e ? re.nodes[1] : re.nodes[0];
  if (!m.rails.has(rail) || rail === b) return undefined;
  const sign = polaritySign(t.tech);
  // Distinct elements on B besides Q (a diode-connected transistor is attached there twice).
  const others = [...new Set(m.topo.conducting(b).filter((a) => a.element !== t.element).map((a) => a.element))];
  for (const first of others) {
    const parts = walk(m, t, sign, b, rail, first);
    if (!parts) continue;
    const zeners = parts.filter((p) => p.how === 'zener').length;
    const forward = parts.length - zeners;
    if (zeners > 1 || (zeners === 0 && forward < 2)) continue;
    // Everything else on B is the feed; a string with no feed is not biased.
    if (others.length < 2) return undefined;
    const partRoles: Record<string, string> = nameTable();
    const members: { t: Transistor; role: StructureRole }[] = [{ t, role: 'pass' }];
    for (const p of parts) {
      const tt = m.topo.byName.get(p.element.name);
      if (tt) members.push({ t: tt, role: 'reference-diode' });
      else partRoles[p.element.name] = p.how === 'zener' ? ZENER : FORWARD;
    }
    partRoles[re.name] = EMITTER;
    return {
      kind: 'diode-referenced-source',
      reference: t,
      refNode: b,
      members,
      outputs: [{ device: t.name, node: m.nodeName(t.out), ratio: 1, degeneration: { resistor: re.name, ohms: re.resistance } }],
      parts: partRoles,
      params: { zeners, forwardJunctions: forward },
      voltages: [{ name: 'VREF', description: zeners ? 'reference voltage of the zener string' : `reference voltage of ${forward} forward junctions`, node: m.nodeName(b), from: m.nodeName(rail) }],
    };
  }
  return undefined;
}

/** Follows a series string from `from` through `first` to `rail`; undefined when it branches, loops or does not arrive. */
function walk(m: Matcher, t: Transistor, sign: 1 | -1, from: number, rail: number, first: Element): StringPart[] | undefined {
  const parts: StringPart[] = [];
  let node = from;
  let el: Element | undefined = first;
  const seen = new Set<number>([from]);
  while (el && parts.length < MAX_STRING) {
    let next: number;
    let how: StringPart['how'];
    if (el.kind === 'D') {
      const [anode, cathode] = el.nodes;
      next = anode === node ? cathode : cathode === node ? anode : NaN;
      if (!Number.isFinite(next)) return undefined;
      // Own polarity: forward when the anode is the end nearer the base for NPN/NMOS (farther for PNP/PMOS).
      const forward = sign > 0 ? anode === node : cathode === node;
      if (forward) how = 'forward';
      else {
        const bv = el.model.params['BV'];
        if (!(Number.isFinite(bv) && bv > 0)) return undefined;
        how = 'zener';
      }
    } else {
      const d = m.topo.byName.get(el.name);
      // A diode-connected transistor of the pass device's technology, conducting from the base side to the rail side.
      if (!d || d === t || d.tech !== t.tech || d.out !== d.ctrl || d.out !== node || m.isClaimed(d)) return undefined;
      next = d.common;
      how = 'forward';
    }
    parts.push({ element: el, how });
    if (next === rail) return parts;
    if (seen.has(next) || m.rails.has(next)) return undefined;
    seen.add(next);
    // An intermediate node carries only this element and the next one.
    const onward = [...new Set(m.topo.conducting(next).filter((a) => a.element !== el).map((a) => a.element))];
    if (onward.length !== 1) return undefined;
    node = next;
    el = onward[0];
  }
  return undefined;
}

/** The string's elements in order from the base node, with what each is. */
function stringOf(h: Hand): { el: Element; how: StringPart['how'] }[] {
  const out: { el: Element; how: StringPart['how'] }[] = [];
  for (const [name, role] of Object.entries(h.s.parts ?? {})) {
    if (role !== ZENER && role !== FORWARD) continue;
    const el = h.topo.elementByName.get(name);
    if (el) out.push({ el, how: role === ZENER ? 'zener' : 'forward' });
  }
  for (const d of h.role('reference-diode')) out.push({ el: d.element, how: 'forward' });
  return out;
}

function emitterResistor(h: Hand): { name: string; ohms: number; rail?: number } {
  const name = Object.entries(h.s.parts ?? {}).find(([, r]) => r === EMITTER)?.[0] ?? h.s.outputs[0]?.degeneration?.resistor ?? '';
  const el = h.topo.elementByName.get(name);
  if (!el || el.kind !== 'R') return { name, ohms: 0 };
  const e = h.refT().common;
  return { name, ohms: el.resistance, rail: el.nodes[0] === e ? el.nodes[1] : el.nodes[0] };
}

/** Model parameter with a default. */
function param(el: Diode, key: string, d: number): number {
  const v = el.model.params[key];
  return Number.isFinite(v) ? v : d;
}

/**
 * Voltage of one string element at current `i` (A) at the analysis temperature: a forward diode
 * N·VT·ln(I/IS(T) + 1) (IS × area × M), a zener BV(T) + NBV·VT·ln(I/IBV) from the breakdown term of
 * docs/DEVICE-MODELS.md (IBV × area × M; BV(T) = BV·(1 + TBV1·ΔT)), a diode-connected transistor its VBE.
 */
function elementVolts(h: Hand, el: Element, how: StringPart['how'], i: number): number {
  const cur = Math.max(i, 1e-18);
  if (el.kind === 'D') {
    const scale = (el.area > 0 ? el.area : 1) * (el.m > 0 ? el.m : 1);
    if (how === 'zener') {
      const bv = param(el, 'BV', Infinity) * (1 + param(el, 'TBV1', 0) * (h.at.temperatureC - cardTnomC(el.model.params, h.circuit.tnomC)));
      const ibv = param(el, 'IBV', 1e-3) * scale;
      return bv + param(el, 'NBV', 1) * h.vt * Math.log(cur / ibv);
    }
    const is = isAtTemperature(param(el, 'IS', 1e-14), h.at.temperatureC, cardTnomC(el.model.params, h.circuit.tnomC), param(el, 'XTI', 3), param(el, 'EG', 1.11)) * scale;
    return param(el, 'N', 1) * h.vt * Math.log(cur / is + 1);
  }
  const p = h.dev(el.name);
  return h.bipolar ? h.vbe(p, cur) : h.vgs(p, cur, 0);
}

function stringVolts(h: Hand, i: number): number {
  return stringOf(h).reduce((v, x) => v + elementVolts(h, x.el, x.how, i), 0);
}

/**
 * At a feed current IREF into the base node: the string carries IREF − IB, so VREF = Σ string
 * voltages at that current; the output solves IE·RE + VBE(IC) = VREF with IE = IC·(1 + 1/β), i.e.
 * IC = (VREF − VBE)/RE·β/(β + 1) (Horowitz and Hill, ch. 2). MOS: ID·RS + VGS(ID, VSB = ID·RS) = VREF.
 */
function analyse(h: Hand, iref: number, c: Chain): ChainResult {
  const p = h.dev(h.s.reference.device);
  const re = emitterResistor(h);
  const beta = h.bipolar ? p.beta : Infinity;
  const vsbOf = (i: number) => (h.bipolar ? 0 : h.vsbBase(p) + i * re.ohms);
  const vCtl = (i: number) => (h.bipolar ? h.vbe(p, Math.max(i, 1e-18)) : h.vgs(p, i, vsbOf(i)));
  const istring = (i: number) => Math.max(iref - i / beta, iref * 1e-6);
  const g = (i: number) => i * (1 + 1 / beta) * re.ohms + vCtl(i) - stringVolts(h, istring(i));
  const iout = iref > 0 && re.ohms > 0 ? solveRising(g, Math.max(stringVolts(h, iref) / re.ohms, 1e-9)) : 0;
  if (c.final) h.memo.set(STRING_CURRENT, istring(iout));
  const vref = stringVolts(h, istring(iout));
  const parts = stringOf(h);
  c.push(() => ({
    quantity: 'VREF',
    formula: `the reference string at its current IREF − IB: ${parts.map((x) => (x.how === 'zener' ? `VZ(${x.el.name}) = BV + NBV·VT·ln(I/IBV)` : `VF(${x.el.name}) = N·VT·ln(I/IS + 1)`)).join(' + ')} (docs/DEVICE-MODELS.md)`,
    substituted: `${parts.map((x) => eng(elementVolts(h, x.el, x.how, istring(iout)), 'V')).join(' + ')} at ${eng(istring(iout), 'A')}`,
    value: vref,
    unit: 'V',
    devices: parts.map((x) => x.el.name),
  }));
  const vbe = c.junction('', p, iout, vsbOf(iout));
  const out = h.s.outputs[0];
  c.push(() => ({
    quantity: `IOUT(${out.device})`,
    formula: h.bipolar ? `(VREF − VBE)/${re.name}·β/(β + 1) (${DIODE_SOURCE})` : `(VREF − VGS)/${re.name}, VGS with the body effect at VSB = ID·${re.name} (${DIODE_SOURCE})`,
    substituted: h.bipolar ? `(${eng(vref, 'V')} − ${eng(vbe, 'V')})/${eng(re.ohms, 'Ω')} × ${sig(beta, 4)}/${sig(beta + 1, 4)}` : `(${eng(vref, 'V')} − ${eng(vbe, 'V')})/${eng(re.ohms, 'Ω')}`,
    value: iout,
    unit: 'A',
    devices: [out.device],
  }));
  const iouts = nameTable<number>();
  iouts[out.device] = iout;
  const edge = nameTable<number>();
  // Active while the collector stays above the base (VBC ≤ 0), or the drain above gate − VTH.
  edge[out.device] = h.bipolar ? vref : vref - thresholdWithBody(p.vto, p.gamma, p.phi, vsbOf(iout));
  return { stack: stringVolts(h, iref), vControl: vbe, iRef: iout, iout: iouts, edge };
}

/**
 * VREF at the string's current and its drift at that current: per zener BV·TBV1 + (VZ − BV(T))/T
 * (the NBV·VT·ln(I/IBV) term is proportional to T), per forward junction (VF − N·EG − N·XTI·VT)/T
 * (the IS(T) law; about −2 mV/°C, Horowitz and Hill, 3rd ed., ch. 2, common practice). No drift by
 * hand for a string of diode-connected MOSFETs.
 */
function voltages(h: Hand, _state: ChainResult, c: Chain): Record<string, { volts: number; tempcoPpmPerC?: number }> {
  const i = h.memo.get(STRING_CURRENT) ?? 0;
  const t = h.at.temperatureC + 273.15;
  let volts = 0;
  let drift: number | undefined = 0;
  for (const x of stringOf(h)) {
    const v = elementVolts(h, x.el, x.how, i);
    volts += v;
    if (drift === undefined) continue;
    if (x.el.kind === 'D') {
      const d = x.el;
      if (x.how === 'zener') {
        const bv = param(d, 'BV', Infinity);
        const bvT = bv * (1 + param(d, 'TBV1', 0) * (h.at.temperatureC - cardTnomC(d.model.params, h.circuit.tnomC)));
        drift += bv * param(d, 'TBV1', 0) + (v - bvT) / t;
      } else drift += (v - param(d, 'N', 1) * param(d, 'EG', 1.11) - param(d, 'N', 1) * param(d, 'XTI', 3) * h.vt) / t;
    } else if (h.bipolar) {
      const p = h.dev(x.el.name);
      const nf = p.nfVt / h.vt;
      const get = (key: string, dflt: number) => (Number.isFinite(p.model.params[key]) ? p.model.params[key] : dflt);
      drift += (v - nf * get('EG', 1.11) - nf * get('XTI', 3) * h.vt) / t;
    } else drift = undefined;
  }
  if (drift !== undefined) {
    const d = drift;
    c.push(() => ({
      quantity: 'dVREF/dT, mV/°C',
      formula: 'Σ per zener BV·TBV1 + (VZ − BV)/T, per forward junction (VF − N·EG − N·XTI·VT)/T (IS(T) law of docs/DEVICE-MODELS.md; about −2 mV/°C per junction, Horowitz and Hill, 3rd ed., ch. 2, common practice)',
      substituted: `at ${eng(i, 'A')} and ${sig(t, 5)} K`,
      value: d * 1e3,
      unit: '',
      devices: stringOf(h).map((x) => x.el.name),
    }));
  }
  return { VREF: { volts, tempcoPpmPerC: drift !== undefined && volts !== 0 ? (drift / volts) * 1e6 : undefined } };
}

export const diodeReferencedSource: KindModule = {
  id: 'diode-referenced-source',
  name: 'diode-referenced current source',
  outputName: 'diode-referenced output',
  summary:
    'A transistor whose base (gate) sits on a zener or a string of forward junctions to a rail, with an emitter (source) resistor to the same rail: IOUT = (VREF − VBE)/RE; the reference voltage, its spread and drift are shown on the base node.',
  technologies: ['npn', 'pnp', 'nmos', 'pmos'],
  seeds: 'not-diode-connected',
  recognise,
  referenceJunctions: 2,
  commonNode: (h) => emitterResistor(h).rail,
  complete: (h) => emitterResistor(h).ohms > 0 && stringOf(h).length > 0,
  analyse,
  stackAt: (h, iref) => stringVolts(h, iref),
  stackFormula: () => 'VREF (the string at IREF)',
  shortcut: (h, x) => {
    const v = stringVolts(h, 1e-3);
    return {
      quantity: 'IREF (string voltage at 1 mA)',
      formula: '(V+ − V− − VREF(1 mA))/R (common practice)',
      substituted: `(${x.supplyText} − ${eng(v, 'V')})/${eng(x.ohms, 'Ω')}`,
      value: Math.max((x.available - v) / x.ohms, 0),
      unit: 'A',
    };
  },
  voltages,
  emitterResistorByOhmsLaw: true,
  outputResistance: (_c, o, out) => commonEmitterRo(o, out),
  ratio: () => undefined,
  earlyInFormula: false,
  simplifications: () => 'the diode-referenced formula neglects the Early effect of the output and the string current drawn off by the base',
};

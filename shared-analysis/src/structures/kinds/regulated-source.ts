// The op-amp-regulated current source: an amplifier (a high-gain E source) drives a transistor's base (gate) so that its emitter (source) node follows a reference voltage across a sense resistor; I = VREF/RSENSE.

import type { Element, Vcvs } from '../../circuit';
import { nameTable } from '../../names';
import { eng, sig } from '../format';
import { thresholdWithBody } from '../formulas';
import type { Chain, ChainResult, Hand } from '../hand';
import type { KindModule } from '../kind';
import type { Draft, Matcher } from '../match';
import type { Transistor } from '../topology';

/** Where the formula comes from. */
export const REGULATED_SOURCE = 'Horowitz and Hill, 3rd ed., ch. 4 (op-amp current source with a sense resistor); Franco, Design with Operational Amplifiers, ch. 2; from memory';

const AMPLIFIER = 'regulating amplifier';
const AMPLIFIER_OUTPUT = 'output resistance of the regulating amplifier';

/** Below this open-loop gain the controlled source is a buffer or a gain stage, not a regulating amplifier. */
const MIN_GAIN = 100;

/**
 * A transistor Q (not diode-connected) whose base (gate) B is the output of an E source (out− on a
 * rail), whose emitter (source) node S carries only Q and a sense resistor RSENSE to a rail, and whose
 * emitter closes the loop on the amplifier's inverting input (ctrl− = S with a positive gain, or
 * ctrl+ = S with a negative one); the other input is the reference node. The E source may drive B
 * through one series resistor (a subcircuit amplifier's output resistance).
 * ```
 *   E: out+ = B (or B through one resistor), out− = rail, ctrl+ = REF, ctrl− = S, gain ≥ 100
 *   Q: c = OUT, b = B, e = S;  RSENSE: S ── rail
 * ```
 */
function recognise(m: Matcher, t: Transistor): Draft | undefined {
  const b = t.ctrl;
  const s = t.common;
  if (b === t.out || b === s || t.out === s) return undefined;
  const sense = m.topo.soleOther(s, (el) => el === t.element);
  if (!sense || sense.element.kind !== 'R' || !(sense.element.resistance > 0) || !Number.isFinite(sense.element.resistance)) return undefined;
  const rs = sense.element;
  const rail = rs.nodes[0] === s ? rs.nodes[1] : rs.nodes[0];
  if (!m.rails.has(rail)) return undefined;
  for (const { amp, series } of amplifiersOn(m, b)) {
    if (!m.rails.has(amp.nodes[1]) || !(Math.abs(amp.gain) >= MIN_GAIN) || !Number.isFinite(amp.gain)) continue;
    const ref = feedbackReference(amp, s);
    if (ref === undefined || ref === s) continue;
    return {
      kind: 'regulated-source',
      reference: t,
      refNode: s,
      members: [{ t, role: 'pass' }],
      outputs: [{ device: t.name, node: m.nodeName(t.out), ratio: 1 }],
      parts: series ? { [amp.name]: AMPLIFIER, [series.name]: AMPLIFIER_OUTPUT } : { [amp.name]: AMPLIFIER },
      params: { gain: Math.abs(amp.gain) },
      voltages: [{ name: 'VREF', description: `reference voltage the amplifier ${amp.name} holds across the sense resistor ${rs.name}`, node: m.nodeName(ref), from: m.nodeName(rail) }],
    };
  }
  return undefined;
}

/**
 * The E sources driving node `b`: directly (their out+ on it), or through one series resistor whose
 * other end carries only that resistor and the E source's out+ — the output resistance of an
 * amplifier written as a subcircuit (an E source behind a resistor), which flattening leaves as
 * `X1.E1` and `X1.ROUT`.
 */
function amplifiersOn(m: Matcher, b: number): { amp: Vcvs; series?: Element }[] {
  const out: { amp: Vcvs; series?: Element }[] = [];
  for (const a of m.topo.at(b)) {
    if (a.element.kind === 'E' && a.slot === 0) out.push({ amp: a.element });
    else if (a.element.kind === 'R') {
      const r = a.element;
      const x = r.nodes[0] === b ? r.nodes[1] : r.nodes[0];
      if (x === b) continue;
      const at = [...new Set(m.topo.conducting(x).map((y) => y.element))];
      const amp = at.find((e) => e !== r);
      if (at.length === 2 && amp && amp.kind === 'E' && amp.nodes[0] === x) out.push({ amp, series: r });
    }
  }
  return out;
}

/** The amplifier's reference input when its feedback from `sense` is negative; undefined otherwise. */
function feedbackReference(amp: Vcvs, sense: number): number | undefined {
  const [, , plus, minus] = amp.nodes;
  if (minus === sense && amp.gain > 0) return plus;
  if (plus === sense && amp.gain < 0) return minus;
  return undefined;
}

function amplifierOf(h: Hand): Vcvs | undefined {
  const name = Object.entries(h.s.parts ?? {}).find(([, r]) => r === AMPLIFIER)?.[0];
  const el = name ? h.topo.elementByName.get(name) : undefined;
  return el && el.kind === 'E' ? el : undefined;
}

/** The sense resistor (the structure's feed) and the rail it returns to. */
function senseOf(h: Hand): { el?: Element; ohms: number; rail?: number } {
  const s = h.refT().common;
  const el = h.topo.elementByName.get(h.s.reference.elements[0] ?? '');
  if (!el || el.kind !== 'R' || !(el.resistance > 0)) return { ohms: 0 };
  return { el, ohms: el.resistance, rail: el.nodes[0] === s ? el.nodes[1] : el.nodes[0] };
}

/**
 * The reference input's potential by hand: a rail (with supply corners), a divider of two resistors
 * between rails, or else the solved node voltage (named as such in the step).
 */
function referenceVolts(h: Hand, node: number): { volts: number; how: string } | undefined {
  const rail = h.railVolts.get(node);
  if (rail !== undefined) return { volts: rail, how: `the rail ${h.topo.nodeName(node)}` };
  const around = [...new Set(h.topo.conducting(node).map((a) => a.element))];
  if (around.length === 2 && around.every((e) => e.kind === 'R' && e.resistance > 0)) {
    const ends = around.map((e) => {
      const other = e.nodes[0] === node ? e.nodes[1] : e.nodes[0];
      return { r: (e as { resistance: number }).resistance, v: h.railVolts.get(other), name: e.name };
    });
    if (ends.every((x) => x.v !== undefined)) {
      const [a, b] = ends;
      return { volts: (a.v! * b.r + b.v! * a.r) / (a.r + b.r), how: `the divider ${a.name}/${b.name}` };
    }
  }
  const solved = h.at.nodeVolts?.(h.topo.nodeName(node));
  return solved !== undefined && Number.isFinite(solved) ? { volts: solved, how: 'the operating point (the reference input is driven by more than a divider)' } : undefined;
}

/**
 * I = VREF/RSENSE·A/(1 + A): the loop holds the sense node at the reference input, short of it by
 * the amplifier's finite gain A (Horowitz and Hill, ch. 4; Franco, ch. 2).
 */
function ownReference(h: Hand, c: Chain): number {
  const amp = amplifierOf(h);
  const sense = senseOf(h);
  const v = h.s.voltages?.[0];
  const refNode = v ? h.topo.nodeIndex.get(v.node) : undefined;
  const railV = sense.rail !== undefined ? h.railVolts.get(sense.rail) : undefined;
  const ref = refNode !== undefined ? referenceVolts(h, refNode) : undefined;
  if (!amp || !sense.el || railV === undefined || !ref) {
    c.push(() => ({ quantity: 'IREF', formula: 'VREF/RSENSE: the reference input or the sense resistor could not be read by hand', substituted: 'not determined', value: 0, unit: 'A' }));
    return 0;
  }
  const vref = h.sign * (ref.volts - railV);
  const a = Math.abs(amp.gain);
  const i = Math.max((vref / sense.ohms) * (a / (1 + a)), 0);
  h.memo.set(REF_VOLTS, vref);
  c.push(() => ({
    quantity: 'VREF',
    formula: `the amplifier's reference input, from ${ref.how}, measured from the sense rail`,
    substituted: `${eng(ref.volts, 'V')} ${h.sign > 0 ? '−' : 'below'} ${eng(railV, 'V')}`,
    value: vref,
    unit: 'V',
  }));
  c.push(() => ({
    quantity: 'IREF',
    formula: `VREF/${sense.el!.name}·A/(1 + A), the emitter (source) current the loop sets (${REGULATED_SOURCE})`,
    substituted: `${eng(vref, 'V')}/${eng(sense.ohms, 'Ω')} × ${sig(a, 3)}/(1 + ${sig(a, 3)})`,
    value: i,
    unit: 'A',
    devices: [h.s.reference.device],
  }));
  return i;
}

const REF_VOLTS = 'regulated-source reference volts';

/** The pass device at the loop's emitter current: IC = IE·β/(β + 1) (ID = IS for MOS); active while its collector stays beyond its base (drain beyond gate − VTH). */
function analyse(h: Hand, iref: number, c: Chain): ChainResult {
  const p = h.dev(h.s.reference.device);
  const out = h.s.outputs[0];
  const beta = h.bipolar ? p.beta : Infinity;
  const iout = h.bipolar ? (iref * beta) / (beta + 1) : iref;
  const sense = senseOf(h);
  const vs = iref * sense.ohms;
  const vsb = h.bipolar ? 0 : h.vsbBase(p) + vs;
  const vctl = c.junction('', p, Math.max(iout, 1e-18), vsb);
  if (h.bipolar) {
    c.push(() => ({
      quantity: `IOUT(${out.device})`,
      formula: 'IE·β/(β + 1): the base current comes from the amplifier, not through the sense resistor',
      substituted: `${eng(iref, 'A')} × ${sig(beta, 4)}/${sig(beta + 1, 4)}`,
      value: iout,
      unit: 'A',
      devices: [out.device],
    }));
  }
  const iouts = nameTable<number>();
  iouts[out.device] = iout;
  const edge = nameTable<number>();
  edge[out.device] = h.bipolar ? vs + vctl : vs + vctl - thresholdWithBody(p.vto, p.gamma, p.phi, vsb);
  return { stack: vs, vControl: vctl, iRef: iout, iout: iouts, edge };
}

export const regulatedSource: KindModule = {
  id: 'regulated-source',
  name: 'op-amp-regulated current source',
  outputName: 'regulated output',
  summary:
    'An amplifier (a high-gain E source, or a subcircuit amplifier whose E source sits behind an output resistor) drives a transistor whose emitter (source) returns through a sense resistor and feeds back to its inverting input, so the sense resistor carries VREF/RSENSE; the reference voltage is shown on its node.',
  technologies: ['npn', 'pnp', 'nmos', 'pmos'],
  seeds: 'not-diode-connected',
  recognise,
  referenceJunctions: 1,
  commonNode: (h) => senseOf(h).rail,
  complete: (h) => amplifierOf(h) !== undefined && senseOf(h).ohms > 0,
  ownReference,
  analyse,
  voltages: (h): Record<string, { volts: number }> => {
    const v = h.memo.get(REF_VOLTS);
    return v === undefined ? nameTable() : { VREF: { volts: v } };
  },
  outputResistance: (c, _o, out) => {
    // The loop holds the emitter (source) still: Rout ≈ ro·(1 + (1 + A)·gm·(RS∥rπ)) + RS, capped at (β + 1)·ro for a BJT, where the
    // base current's share of a collector change sets the limit (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 3/9, feedback output resistance; from memory).
    const rs = c.resistance(c.s.reference.elements[0] ?? '');
    const a = c.s.params?.gain ?? 0;
    const rp = Number.isFinite(out.rpi) ? (rs * out.rpi) / (rs + out.rpi) : rs;
    const r = out.ro * (1 + (1 + a) * (out.gm + out.gmb) * rp) + rp;
    return c.bipolar && Number.isFinite(out.beta) ? Math.min(r, (out.beta + 1) * out.ro) : r;
  },
  ratio: () => undefined,
  earlyInFormula: false,
  simplifications: () => "the regulated-source formula takes the amplifier as a pure gain (no offset, no input current) and the pass device's base current from the amplifier",
};

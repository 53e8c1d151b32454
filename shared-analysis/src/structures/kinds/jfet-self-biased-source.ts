// The JFET self-biased current source: a depletion JFET whose source resistor returns to its own gate node, so ID = IDSS·(1 − VGS/VP)² with VGS = −ID·RS.

import type { Resistor } from '../../circuit';
import { nameTable } from '../../names';
import { eng, sig } from '../format';
import { degeneratedRo } from '../formulas';
import type { Chain, ChainResult, Hand } from '../hand';
import type { KindCheckContext, KindFinding, KindModule } from '../kind';
import type { Draft, Matcher } from '../match';
import type { Topology, Transistor } from '../topology';

/** Where the formulas come from. */
export const JFET_SELF_BIAS =
  'Shockley square law ID = IDSS·(1 − VGS/VP)² (W. Shockley, Proc. IRE 40, 1952); self-bias with VGS = −ID·RS solved as a quadratic: Boylestad and Nashelsky, Electronic Devices and Circuit Theory, ch. 7 (self-bias configuration), from memory';

/** The `parts` role of a gate resistor (it carries only the gate's leakage, so the gate sits at the resistor's far end). */
const GATE_RESISTOR = 'gate resistor (carries only gate leakage)';

/**
 * A JFET J (not diode-connected) whose source node S carries only J and one resistor RS, and whose gate
 * sits on RS's far end G: directly, or through one gate resistor RG whose gate end carries nothing
 * else (it carries only the gate's leakage, so VG equals V(G)). G must lead on (the current returns
 * through it), so VGS = −ID·RS whatever G is tied to:
 * ```
 *   J: d = OUT, g = G (or g ── RG ── G), s = S;  RS: S ── G;  G ── the rest of the circuit
 * ```
 * The current is set by the JFET and RS alone; the drain side is the load.
 */
function recognise(m: Matcher, t: Transistor): Draft | undefined {
  if (t.element.kind !== 'J') return undefined;
  const s = t.common;
  if (t.ctrl === t.out || t.ctrl === s || t.out === s) return undefined;
  const rs = sourceResistor(m.topo, t);
  if (!rs) return undefined;
  const g = rs.nodes[0] === s ? rs.nodes[1] : rs.nodes[0];
  if (g === s || g === t.out) return undefined;
  let rg: Resistor | undefined;
  if (t.ctrl !== g) {
    rg = gateResistor(m.topo, t, g);
    if (!rg) return undefined;
  }
  // The current returns through G: something besides RS, RG and J's gate must conduct there.
  const onward = m.topo.conducting(g).filter((a) => a.element !== rs && a.element !== rg && a.element !== t.element);
  if (onward.length === 0) return undefined;
  return {
    kind: 'jfet-self-biased-source',
    reference: t,
    refNode: s,
    members: [{ t, role: 'pass' }],
    outputs: [{ device: t.name, node: m.nodeName(t.out), ratio: 1 }],
    params: { rsOhms: rs.resistance },
    ...(rg ? { parts: { [rg.name]: GATE_RESISTOR } } : {}),
  };
}

/** The one resistor on J's source node (nothing else conducts there), when it has a finite positive value. */
function sourceResistor(topo: Topology, t: Transistor): Resistor | undefined {
  const sole = topo.soleOther(t.common, (el) => el === t.element);
  const el = sole?.element;
  return el && el.kind === 'R' && el.resistance > 0 && Number.isFinite(el.resistance) ? el : undefined;
}

/** The resistor from J's gate node to `g`, when the gate node carries only that resistor and J's gate. */
function gateResistor(topo: Topology, t: Transistor, g: number): Resistor | undefined {
  const sole = topo.soleOther(t.ctrl, (el) => el === t.element);
  const el = sole?.element;
  if (!el || el.kind !== 'R' || !(el.resistance > 0) || !Number.isFinite(el.resistance)) return undefined;
  const far = el.nodes[0] === t.ctrl ? el.nodes[1] : el.nodes[0];
  return far === g ? el : undefined;
}

/** RS and the node it returns to (the gate's node), for the hand analysis. */
function loopOf(h: Hand): { rs: Resistor; g: number } | undefined {
  const t = h.refT();
  const rs = sourceResistor(h.topo, t);
  if (!rs) return undefined;
  return { rs, g: rs.nodes[0] === t.common ? rs.nodes[1] : rs.nodes[0] };
}

/**
 * The self-biased drain current. With IDSS = BETA·area·M·VP² (docs/DEVICE-MODELS.md: the model's
 * ID = BETA·(VGS − VTO)² is Shockley's law with VP = VTO) and a = RS/|VP|, ID = IDSS·(1 − a·ID)²
 * is the quadratic IDSS·a²·ID² − (2·IDSS·a + 1)·ID + IDSS = 0. Of its two roots the smaller keeps
 * |VGS| = ID·RS below |VP| (the larger lies beyond pinch-off, where the law does not hold); written
 * ID = 2·IDSS/((2k + 1) + sqrt(4k + 1)) with k = IDSS·a, which stays exact as RS → 0 (ID → IDSS).
 * Channel-length modulation multiplies IDSS by (1 + λ·VDS) when the drain voltage is known.
 */
export function selfBiasedCurrent(idss: number, vp: number, rs: number): number {
  if (!(idss > 0) || !(vp < 0)) return 0;
  const a = rs / -vp;
  const k = idss * a;
  return (2 * idss) / (2 * k + 1 + Math.sqrt(4 * k + 1));
}

function ownReference(h: Hand, c: Chain): number {
  const loop = loopOf(h);
  const p = h.dev(h.s.reference.device);
  if (!loop) {
    c.push(() => ({ quantity: 'IREF', formula: 'IDSS·(1 − VGS/VP)² with VGS = −ID·RS: the source resistor could not be read', substituted: 'not determined', value: 0, unit: 'A' }));
    return 0;
  }
  const vp = p.vto;
  const idss0 = (p.kBeta / 2) * vp * vp;
  const rs = loop.rs.resistance;
  const name = p.t.name;
  c.push(() => ({
    quantity: `IDSS(${name})`,
    formula: `BETA·area·M·VP², the drain current with the gate at the source (docs/DEVICE-MODELS.md; ${JFET_SELF_BIAS})`,
    substituted: `${eng(p.kBeta / 2, 'A/V²')} × (${eng(vp, 'V')})²`,
    value: idss0,
    unit: 'A',
    devices: [name],
  }));
  if (!(vp < 0)) {
    c.push(() => ({
      quantity: 'IREF',
      formula: 'VGS = −ID·RS ≤ 0 never rises above a pinch-off voltage VP ≥ 0, so the channel stays off',
      substituted: `VP = ${eng(vp, 'V')}`,
      value: 0,
      unit: 'A',
      devices: [name],
    }));
    return 0;
  }
  // λ: IDSS·(1 + λ·VDS) with VDS = V(drain) − V(G) − ID·RS in the device's own sense, a few fixed-point passes.
  const vdOut = h.at.outputVolts?.[name];
  const vg = h.railVolts.get(loop.g) ?? h.at.nodeVolts?.(h.topo.nodeName(loop.g));
  const withClm = p.lambda > 0 && vdOut !== undefined && vg !== undefined && Number.isFinite(vdOut) && Number.isFinite(vg);
  let id = selfBiasedCurrent(idss0, vp, rs);
  let clm = 1;
  if (withClm) {
    for (let n = 0; n < 8; n++) {
      clm = Math.max(1 + p.lambda * (h.sign * (vdOut - vg) - id * rs), 0.05);
      id = selfBiasedCurrent(idss0 * clm, vp, rs);
    }
  }
  const idss = idss0 * clm;
  const k = idss * (rs / -vp);
  c.push(() => ({
    quantity: `ID(${name})`,
    formula:
      `IDSS·(1 − VGS/VP)² with VGS = −ID·RS: the root of IDSS·a²·ID² − (2·IDSS·a + 1)·ID + IDSS = 0 (a = RS/|VP|) with |VGS| < |VP|, ` +
      `ID = 2·IDSS/((2·IDSS·a + 1) + sqrt(4·IDSS·a + 1))${withClm ? ', IDSS × (1 + λ·VDS)' : ''} (${JFET_SELF_BIAS})`,
    substituted: `2 × ${eng(idss, 'A')}/((2 × ${sig(k, 4)} + 1) + sqrt(4 × ${sig(k, 4)} + 1)), a = ${eng(rs, 'Ω')}/${eng(-vp, 'V')}`,
    value: id,
    unit: 'A',
    devices: [name],
  }));
  return id;
}

/** The JFET at its self-biased current: VGS = −ID·RS, the source ID·RS beyond G, saturated while V(drain) stays beyond V(G) − VP. */
function analyse(h: Hand, iref: number, c: Chain): ChainResult {
  const p = h.dev(h.s.reference.device);
  const out = h.s.outputs[0];
  const rs = loopOf(h)?.rs;
  const ohms = rs?.resistance ?? 0;
  const vgs = -iref * ohms;
  c.push(() => ({
    quantity: `VGS(${p.t.name})`,
    formula: `−ID·${rs?.name ?? 'RS'}: the gate sits at the far end of the source resistor`,
    substituted: `−${eng(iref, 'A')} × ${eng(ohms, 'Ω')}`,
    value: vgs,
    unit: 'V',
    devices: [p.t.name],
  }));
  const iout = nameTable<number>();
  iout[out.device] = iref;
  const edge = nameTable<number>();
  // VDS ≥ VGS − VP: V(drain) − V(G) ≥ ID·RS + (−ID·RS − VP) = −VP.
  edge[out.device] = -p.vto;
  return { stack: iref * ohms, vControl: vgs, iRef: iref, iout, edge };
}

/** A pinch-off voltage at or above zero: the self-bias (VGS ≤ 0) can never open the channel. */
function check(c: KindCheckContext): KindFinding[] {
  const name = c.s.reference.device;
  const rec = c.op?.devices[name];
  if (!rec || rec.type !== 'jfet' || !(rec.vto >= 0)) return [];
  return [
    {
      code: 'jfet-source-pinched-off',
      at: name,
      message:
        `${name}'s model gives a pinch-off voltage VTO = ${eng(rec.vto, 'V')} (at or above 0 V), so the self-bias VGS = −ID·RS ≤ 0 keeps its channel pinched off ` +
        `and the source carries ${eng(Math.abs(rec.id), 'A')}. A depletion JFET's VTO is negative in the model's own sense for both channel types: ` +
        `a P-channel data sheet's positive VGS(off) is written as a negative VTO (docs/DEVICE-MODELS.md).`,
      data: { device: name, vto: rec.vto, id: rec.id },
    },
  ];
}

export const jfetSelfBiasedSource: KindModule = {
  id: 'jfet-self-biased-source',
  name: 'JFET self-biased current source',
  outputName: 'self-biased JFET output',
  summary:
    'A depletion JFET whose source resistor RS returns to its own gate node (directly or through a gate resistor that carries only leakage), so VGS = −ID·RS and ID = IDSS·(1 − VGS/VP)², solved as a quadratic with |VGS| < |VP|; the drain stays saturated while it sits |VP| beyond the gate.',
  technologies: ['njf', 'pjf'],
  seeds: 'not-diode-connected',
  recognise,
  referenceJunctions: 1,
  commonNode: (h) => loopOf(h)?.g,
  complete: (h) => loopOf(h) !== undefined,
  ownReference,
  analyse,
  // Source degeneration of a common-source stage: ro·(1 + gm·RS) + RS (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 3; from memory).
  outputResistance: (c, _o, out) => degeneratedRo(out.ro, out.gm, c.s.params?.rsOhms ?? 0, Infinity),
  ratio: () => undefined,
  earlyInFormula: true,
  simplifications: () => "the square law of the self-bias analysis (gate leakage, and the pinch-off voltage's spread between parts, not included)",
  codes: {
    'jfet-source-pinched-off': {
      severity: 'warning',
      summary:
        "A JFET self-biased current source whose model's pinch-off voltage VTO is at or above 0 V: the self-bias VGS = −ID·RS ≤ 0 can never open the channel, so it carries no current (often a P-channel model written with the data sheet's positive VGS(off)).",
    },
  },
  check,
};

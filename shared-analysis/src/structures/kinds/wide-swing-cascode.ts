// The wide-swing (high-swing) MOS cascode mirror: the bottom pair's gates on the reference cascode's drain, the cascode gates on a separate bias branch.

import { maxOf, minOf } from '../../arrays';
import { nameTable } from '../../names';
import { eng, sig } from '../format';
import { thresholdWithBody } from '../formulas';
import { RAZAVI, SQUARE_LAW, type Chain, type ChainResult, type DeviceParams, type Hand } from '../hand';
import type { KindCheckContext, KindFinding, KindModule } from '../kind';
import type { Draft, Matcher } from '../match';
import type { Transistor } from '../topology';
import type { StructureOutput } from '../types';
import { roleOf } from '../recognised';

/** Where the wide-swing cascode's analysis comes from. */
export const WIDE_SWING_SOURCE = 'Johns and Martin, Analog Integrated Circuit Design, ch. 6, wide-swing cascode current mirror; Razavi, ch. 5; from memory';

/** The single element besides the structure's own devices on a node, when there is exactly one. */
function soleElementOn(m: Matcher, node: number, own: Transistor[]): string[] {
  const names = new Set(m.topo.conducting(node).map((a) => a.element.name));
  for (const t of own) names.delete(t.name);
  return [...names];
}

/**
 * The reference side: M1 (gate on A, drain on X1, source on S) under the cascode M3 (drain on A,
 * gate on GC, source on X1), IREF entering A; each output: M2 (gate on A, source on S, drain X2)
 * under M4 (source X2, gate GC, drain OUT); the cascode-bias branch: a diode-connected M5 on GC with
 * its source on a rail, fed by its own resistor, current source or mirror output.
 * ```
 *  IREF→A              IOUT
 *   M3: d=A, g=GC      M4: d=OUT, g=GC          M5: d=g=GC, s=rail (cascode bias)
 *       s=X1               s=X2
 *   M1: d=X1, g=A      M2: d=X2, g=A
 *       s=S                s=S
 * ```
 */
function recognise(m: Matcher, m1: Transistor): Draft | undefined {
  if (m1.element.kind !== 'M') return undefined;
  const a = m1.ctrl;
  const x1 = m1.out;
  const s = m1.common;
  if (x1 === a || x1 === s) return undefined;
  const m3 = m.candidates(m1.tech, (t) => t.common === x1 && t.out === a && t.ctrl !== a && t.ctrl !== x1, [m1], m.onCommon(x1))[0];
  if (!m3 || soleElementOn(m, x1, [m1, m3]).length !== 0) return undefined;
  const gc = m3.ctrl;
  const bias = (m.onCtrl(gc) ?? []).find((t) => t.tech === m1.tech && t.out === gc && m.rails.has(t.common) && t !== m1 && t !== m3);
  if (!bias) return undefined;
  const outputs: StructureOutput[] = [];
  const members: Draft['members'] = [
    { t: m1, role: 'reference' },
    { t: m3, role: 'cascode' },
  ];
  for (const m2 of m.candidates(m1.tech, (t) => t.ctrl === a && t.common === s && t.out !== x1 && t.out !== a, [m1, m3], m.onCtrl(a))) {
    const x2 = m2.out;
    const m4 = m.candidates(m1.tech, (t) => t.common === x2 && t.ctrl === gc && t.out !== x2, [m1, m3, m2], m.onCommon(x2))[0];
    if (!m4 || soleElementOn(m, x2, [m2, m4]).length !== 0) continue;
    outputs.push({ device: m4.name, node: m.nodeName(m4.out), ratio: m2.scale / m1.scale });
    members.push({ t: m2, role: 'lower-partner' }, { t: m4, role: 'output' });
  }
  if (outputs.length === 0) return undefined;
  members.push({ t: bias, role: 'cascode-bias' });
  return { kind: 'wide-swing-cascode', reference: m1, refNode: a, members, outputs };
}

/** Drain current of a level-1 MOSFET at an overdrive and VDS (saturation or triode, with λ). */
function squareLaw(p: DeviceParams, vov: number, vds: number): number {
  if (!(vov > 0) || !(vds > 0)) return 0;
  const clm = 1 + p.lambda * vds;
  return vds >= vov ? (p.kBeta / 2) * vov * vov * clm : p.kBeta * (vov * vds - (vds * vds) / 2) * clm;
}

/** Overdrive a level-1 MOSFET needs to carry `id` at `vds` (saturation or triode). */
function overdriveFor(p: DeviceParams, id: number, vds: number): number {
  if (!(id > 0) || !(p.kBeta > 0)) return 0;
  const clm = 1 + p.lambda * Math.max(vds, 0);
  const sat = Math.sqrt((2 * id) / (p.kBeta * clm));
  if (vds >= sat || !(vds > 0)) return sat;
  return id / (p.kBeta * vds * clm) + vds / 2;
}

/** The cascode-bias branch as the hand analysis found it. */
interface Bias {
  vgc?: number;
  ib?: number;
  /** The steps that found it, pushed on every recorded evaluation. */
  steps: Parameters<Chain['push']>[0][];
}

const biasOf = new WeakMap<Hand, Bias>();

/** The cascode-bias voltage VGC above the structure's common node, found once per analysis; its steps go into `c`. */
function biasVoltage(h: Hand, c: Chain): Bias {
  let b = biasOf.get(h);
  if (!b) biasOf.set(h, (b = findBias(h)));
  for (const st of b.steps) c.push(st);
  return b;
}

function findBias(h: Hand): Bias {
  const m5 = h.role('cascode-bias')[0];
  const vc = h.commonVolts();
  const out: Bias = { steps: [] };
  if (!m5 || vc === undefined) return out;
  const p5 = h.dev(m5.name);
  const vs5 = h.railVolts.get(m5.common);
  const gc = m5.ctrl;
  const names = [...new Set(h.topo.conducting(gc).map((a) => a.element))].filter((e) => e !== m5.element);
  let ib: number | undefined;
  let how = '';
  if (names.length === 1 && names[0].kind === 'R' && vs5 !== undefined) {
    const r = names[0];
    const far = r.nodes[0] === gc ? r.nodes[1] : r.nodes[0];
    const vr = h.railVolts.get(far);
    if (vr !== undefined && r.resistance > 0) {
      const avail = h.sign * (vr - vs5);
      let lo = 0;
      let hi = Math.max(avail / r.resistance, 0);
      for (let n = 0; n < 200 && hi - lo > 1e-15 * hi; n++) {
        const mid = 0.5 * (lo + hi);
        if (mid * r.resistance + h.vgs(p5, mid, 0) > avail) hi = mid;
        else lo = mid;
      }
      ib = 0.5 * (lo + hi);
      how = `(V+ − V− − VGS(${m5.name}))/${r.name}, solved with the square law`;
    }
  } else if (names.length === 1 && names[0].kind === 'I') {
    const src = names[0];
    const dc = h.at.sourceValues?.[src.name] ?? src.dc;
    ib = Math.max(h.sign * (src.nodes[1] === gc ? dc : -dc), 0);
    how = `the current source ${src.name}`;
  }
  if (ib !== undefined && vs5 !== undefined) {
    const vgs5 = h.vgs(p5, ib, 0);
    const current = ib;
    const vgc = h.sign * (vs5 - vc) + vgs5;
    out.ib = current;
    out.vgc = vgc;
    out.steps.push(() => ({ quantity: `IB(${m5.name})`, formula: `the cascode-bias branch's current: ${how}`, substituted: eng(current, 'A'), value: current, unit: 'A', devices: [m5.name] }));
    out.steps.push(() => ({
      quantity: `VGC = VGS(${m5.name})`,
      formula: `VTH + sqrt(2·IB/(KP·W/L·M)): the cascode gates' bias, sized for about VTH + 2·VOV (${WIDE_SWING_SOURCE})`,
      substituted: `${eng(p5.vto, 'V')} + sqrt(2 × ${eng(current, 'A')}/${eng(p5.kBeta, 'A/V²')})`,
      value: vgc,
      unit: 'V',
      devices: [m5.name],
    }));
    return out;
  }
  const solved = h.at.nodeVolts?.(h.topo.nodeName(gc));
  if (solved !== undefined && Number.isFinite(solved)) {
    const vgc = h.sign * (solved - vc);
    out.vgc = vgc;
    out.steps.push(() => ({
      quantity: `VGC = V(${h.topo.nodeName(gc)})`,
      formula: "taken from the operating point (the cascode-bias branch's feed is not a resistor to a rail or a current source)",
      substituted: eng(solved, 'V'),
      value: vgc,
      unit: 'V',
      devices: [m5.name],
    }));
  }
  return out;
}

/**
 * VDS of a bottom device under its cascode: VX = VGC − VGS(cascode at `id`, its source raised to VX,
 * its own VDS from `cascodeVds`), by bisection on VX.
 */
function bottomVds(h: Hand, cascode: DeviceParams, id: number, vgc: number, vsb0: number, cascodeVds: (vx: number, vgs: number) => number): number {
  let lo = 0;
  let hi = Math.max(vgc, 0);
  const g = (vx: number) => vx + h.vgsWithVds(cascode, id, vsb0 + vx, (vgs) => cascodeVds(vx, vgs)) - vgc;
  if (g(lo) >= 0) return 0;
  for (let n = 0; n < 200 && hi - lo > 1e-12; n++) {
    const mid = 0.5 * (lo + hi);
    if (g(mid) > 0) hi = mid;
    else lo = mid;
  }
  return 0.5 * (lo + hi);
}

/**
 * At IREF: VDS1 = VGC − VGS3 (the reference cascode at IREF); M1 carries IREF at that VDS, in
 * saturation or, by design, in triode (Shichman–Hodges triode law); each output's bottom device
 * has M1's gate voltage, VDS2 = VGC − VGS4 at its own current, so IOUT follows the (W/L) ratio with
 * the VDS difference; the minimum output voltage is VDS2 + VOV4 = VGC − VTH4, about 2·VOV.
 */
function analyse(h: Hand, iref: number, c: Chain): ChainResult {
  const iout: Record<string, number> = nameTable();
  const edge: Record<string, number> = nameTable();
  const m1 = h.dev(h.s.reference.device);
  const m3 = h.dev(h.role('cascode')[0].name);
  const vsb0 = h.vsbBase(m1);
  const { vgc } = biasVoltage(h, c);
  const vth1 = thresholdWithBody(m1.vto, m1.gamma, m1.phi, vsb0);
  let vx1: number | undefined;
  let vov1 = overdriveFor(m1, iref, Infinity);
  if (vgc !== undefined) {
    // The reference cascode's VDS is VGS1 − VX1: the two are solved together.
    for (let n = 0; n < 40; n++) {
      const vgsNow = vth1 + vov1;
      const vx = bottomVds(h, m3, iref, vgc, vsb0, (x) => vgsNow - x);
      const next = overdriveFor(m1, iref, vx);
      const done = vx1 !== undefined && Math.abs(vx - vx1) < 1e-12 && Math.abs(next - vov1) < 1e-12;
      vx1 = vx;
      vov1 = next;
      if (done) break;
    }
  }
  const vgs1 = vth1 + vov1;
  const satOv1 = Math.sqrt((2 * iref) / (m1.kBeta * (1 + m1.lambda * (vx1 ?? 0))));
  if (vx1 !== undefined) {
    const x = vx1;
    const vgs3 = vgc! - x;
    c.push(() => ({
      quantity: `VDS(${m1.t.name})`,
      formula: `VGC − VGS(${m3.t.name}) at IREF, its threshold raised by its source voltage: what the cascode leaves the bottom device (${WIDE_SWING_SOURCE})`,
      substituted: `${eng(vgc!, 'V')} − ${eng(vgs3, 'V')}`,
      value: x,
      unit: 'V',
      devices: [m1.t.name, m3.t.name],
    }));
    c.push(() => ({
      quantity: `VDS(${m1.t.name}) − VOV(${m1.t.name})`,
      formula: `VDS − sqrt(2·IREF/(KP·W/L·M)): at or above 0 the bottom device is saturated, below it is in triode (by design in some wide-swing sizings; the cascodes hold the two bottom VDS equal) (${SQUARE_LAW})`,
      substituted: `${eng(x, 'V')} − ${eng(satOv1, 'V')}`,
      value: x - satOv1,
      unit: 'V',
      devices: [m1.t.name],
    }));
  }
  c.push(() => ({
    quantity: `VGS(${m1.t.name})`,
    formula:
      vx1 !== undefined && vx1 < satOv1
        ? `VTH + IREF/(KP·W/L·M·VDS) + VDS/2: the triode law solved for the gate voltage (${SQUARE_LAW})`
        : `VTH + sqrt(2·IREF/(KP·W/L·M·(1 + λ·VDS))) (${SQUARE_LAW})`,
    substituted: `${eng(vth1, 'V')} + ${eng(vov1, 'V')}`,
    value: vgs1,
    unit: 'V',
    devices: [m1.t.name],
  }));
  const partners = h.role('lower-partner');
  h.s.outputs.forEach((o, k) => {
    const m4 = h.dev(o.device);
    const m2 = h.dev(partners[k]?.name ?? o.device);
    const vov2 = vgs1 - thresholdWithBody(m2.vto, m2.gamma, m2.phi, h.vsbBase(m2));
    let id = o.ratio * iref;
    let vx2: number | undefined;
    if (vgc !== undefined) {
      // The output cascode's VDS runs from VX2 to the output node (when it is known), else taken as its VGS.
      const vxAt = (i: number) => bottomVds(h, m4, i, vgc, vsb0, (x, vgs) => h.outputVds(m4.t, x) ?? vgs);
      // M2's current at VX2(ID) falls as ID rises (a larger ID lifts VGS4 and lowers VX2): bisection on ID.
      let lo = 0;
      let hi = Math.max(2 * o.ratio * iref, squareLaw(m2, vov2, Math.max(vgc, vov2)) * 1.01, 1e-15);
      for (let n = 0; n < 200 && hi - lo > 1e-14 * hi; n++) {
        const mid = 0.5 * (lo + hi);
        if (squareLaw(m2, vov2, vxAt(mid)) > mid) lo = mid;
        else hi = mid;
      }
      id = 0.5 * (lo + hi);
      vx2 = vxAt(id);
    } else id = vov2 > 0 ? (m2.kBeta / 2) * vov2 * vov2 : 0;
    iout[o.device] = id;
    const x2 = vx2;
    if (x2 !== undefined) {
      const vth4 = thresholdWithBody(m4.vto, m4.gamma, m4.phi, vsb0 + x2);
      edge[o.device] = vgc! - vth4;
      const vov4 = vgc! - x2 - vth4;
      c.push(() => ({
        quantity: `VOUT,min(${o.node})`,
        formula: `VDS(${m2.t.name}) + VOV(${m4.t.name}) = VGC − VTH(${m4.t.name}): the lowest output voltage that keeps the cascode saturated; the textbook target is 2·VOV plus a margin of a few hundred mV (${WIDE_SWING_SOURCE}; margin common practice)`,
        substituted: `${eng(x2, 'V')} + ${eng(vov4, 'V')} (2·VOV = ${eng(2 * Math.max(vov2, 0), 'V')})`,
        value: x2 + vov4,
        unit: 'V',
        devices: [o.device, m2.t.name],
      }));
    }
    c.push(() => ({
      quantity: `IOUT(${o.device})`,
      formula: `the current of ${m2.t.name} at ${m1.t.name}'s gate voltage and its own VDS = VGC − VGS(${m4.t.name}): ((W/L) ratio) × IREF when both bottom VDS are equal, saturated or not (${RAZAVI}; ${SQUARE_LAW})`,
      substituted: `${sig(o.ratio)} × ${eng(iref, 'A')}${x2 !== undefined ? ` at VDS = ${eng(x2, 'V')}` : ''}`,
      value: id,
      unit: 'A',
      devices: [o.device, m2.t.name],
    }));
  });
  return { stack: vgs1, vControl: vgs1, iRef: iref, iout, edge };
}

/** The bottom devices' VDS at the operating point: an info when they sit in triode (by design or not), with what sets it. */
function check(c: KindCheckContext): KindFinding[] {
  const op = c.op;
  if (!op) return [];
  const out: KindFinding[] = [];
  const bottoms = c.s.devices.filter((d) => roleOf(c.s, d) === 'reference' || roleOf(c.s, d) === 'lower-partner');
  const triode: { d: string; vds: number; vov: number }[] = [];
  for (const d of bottoms) {
    const rec = op.devices[d];
    if (rec?.type !== 'mosfet' || rec.region !== 'triode') continue;
    triode.push({ d, vds: c.sign * rec.vds, vov: rec.vov });
  }
  if (triode.length === 0) return out;
  const bias = c.s.devices.find((d) => roleOf(c.s, d) === 'cascode-bias');
  const list = triode.map((x) => `${x.d} at VDS ${eng(x.vds, 'V')} against VOV ${eng(x.vov, 'V')}`).join(', ');
  const vds = triode.map((x) => x.vds);
  const spread = maxOf(vds) - minOf(vds);
  out.push({
    code: 'cascode-bottom-in-triode',
    at: triode[0].d,
    message:
      `The bottom devices of the wide-swing cascode on ${c.s.reference.device} are in triode: ${list}. ` +
      `The mirror still matches while their VDS are equal${triode.length > 1 ? ` (here within ${eng(spread, 'V')})` : ''}, but the output resistance falls and the ratio follows any VDS difference; ` +
      `to bring them to the saturation edge, raise the cascode bias (a smaller W/L or a larger current for ${bias ?? 'the cascode-bias device'}) until VGC ≥ VGS(cascode) + VOV(bottom).`,
    data: { devices: triode.map((x) => x.d), vds: triode.map((x) => x.vds), vov: triode.map((x) => x.vov), biasDevice: bias },
  });
  return out;
}

export const wideSwingCascode: KindModule = {
  id: 'wide-swing-cascode',
  name: 'wide-swing cascode mirror',
  outputName: 'wide-swing cascode output',
  summary:
    'A MOS cascode mirror whose bottom gates sit on the reference cascode\'s drain and whose cascode gates come from a separate diode-connected bias device; the output stays saturated down to about 2·VOV, and the bottom devices\' VDS is checked.',
  technologies: ['nmos', 'pmos'],
  seeds: 'not-diode-connected',
  recognise,
  referenceJunctions: 1,
  requiredRoles: ['cascode', 'lower-partner', 'cascode-bias'],
  analyse,
  outputResistance: (c, o, out, i) => {
    // Source: Razavi, ch. 5 — Rout = ro4 + ro2 + (gm4 + gmb4)·ro4·ro2 of a cascode, body effect included (from memory); with the
    // bottom device in triode its ro is the triode channel resistance, which the solved record carries.
    const k = c.s.outputs.indexOf(o);
    const partners = c.s.devices.filter((d) => roleOf(c.s, d) === 'lower-partner');
    const ro2 = partners[k] ? c.smallSignal(partners[k], i).ro : out.ro;
    return ro2 >= 1e30 ? 1e30 : out.ro + ro2 + (out.gm + out.gmb) * out.ro * ro2;
  },
  ratio: (c, o) => {
    if (Math.abs(o.ratio - 1) < 1e-9) return undefined;
    return {
      message: `${o.device} is a 1:${sig(o.ratio)} output of the wide-swing cascode mirror on ${c.s.reference.device} ((W/L) × M of its bottom device relative to the reference's): IOUT ≈ ${sig(o.ratio)}·IREF${c.estimate && c.estimate.irefFrom !== 'unknown' ? ` = ${eng(c.estimate.iout[o.device] ?? 0, 'A')} by hand` : ''}.`,
      data: { device: o.device, ratio: o.ratio, iout: c.estimate?.iout[o.device] },
    };
  },
  earlyInFormula: true,
  simplifications: () => 'the square law of the wide-swing analysis (body effect of the cascodes included, subthreshold conduction not)',
  codes: {
    'cascode-bottom-in-triode': {
      severity: 'info',
      summary:
        'The bottom devices of a wide-swing cascode mirror sit in triode: matched while their VDS are equal, but with a lower output resistance; says their VDS and overdrive and how to raise the cascode bias.',
    },
  },
  check,
};

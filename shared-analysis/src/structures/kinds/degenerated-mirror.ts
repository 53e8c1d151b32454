// The degenerated current mirror: emitter (source) resistors on the reference and every output to one common node set the ratio.

import type { Element } from '../../circuit';
import { eng, sig } from '../format';
import { degeneratedOutput, degeneratedRoWithBase, earlyFactor, thresholdWithBody, UNBOUNDED_OHMS, vbeAt } from '../formulas';
import { GRAY, RAZAVI, solveRising, type Chain, type ChainResult, type Hand } from '../hand';
import type { KindModule } from '../kind';
import { mirrorMembers, type Draft, type Matcher } from '../match';
import type { Transistor } from '../topology';
import type { StructureOutput } from '../types';
import { nameTable } from '../../names';

/**
 * A diode-connected reference D (collector = base = A) whose emitter node X1 carries only D (and
 * paralleled twins) and one resistor R1 to a common node E. Every other device with its base on A
 * whose emitter reaches E through exactly one resistor R2 of its own is an output. The resistors
 * set the ratio (about R1/R2 at large drops), so the kind is its own; outputs with their emitter
 * straight on E or on X1 do not belong to it. No degenerated output, no structure (the reference
 * is then tried as a simple mirror on X1).
 * ```
 *   IREF→A
 *   D: c=b=A, e=X1;  R1 from X1 to E        O: c=out, b=A, e=X2;  R2 from X2 to E
 * ```
 */
function recognise(m: Matcher, d: Transistor): Draft | undefined {
  const a = d.ctrl;
  const x1 = d.common;
  if (x1 === a || !m.hasOffsetOutput(d)) return undefined;
  const twins = m.candidates(d.tech, (t) => t.out === a && t.ctrl === a && t.common === x1, [d], m.onCtrl(a));
  const own = new Set<Element>([d.element]);
  for (const t of twins) own.add(t.element);
  const sole = m.topo.soleOther(x1, (el) => own.has(el));
  if (!sole || sole.element.kind !== 'R') return undefined;
  const r1 = sole.element;
  if (!(Number.isFinite(r1.resistance) && r1.resistance > 0)) return undefined;
  const e = r1.nodes[0] === x1 ? r1.nodes[1] : r1.nodes[0];
  if (e === x1 || e === a) return undefined;
  const refScale = d.scale + twins.reduce((sum, t) => sum + t.scale, 0);
  const outputs: StructureOutput[] = [];
  const outDevices: Transistor[] = [];
  for (const o of m.candidates(d.tech, (t) => t.ctrl === a && t.out !== a && t.common !== x1 && t.common !== e, [d, ...twins], m.onCtrl(a))) {
    const r2 = m.degeneration(o, e);
    if (!r2 || r2 === r1) continue;
    outputs.push({ device: o.name, node: m.nodeName(o.out), ratio: o.scale / refScale, degeneration: { resistor: r2.name, ohms: r2.resistance } });
    outDevices.push(o);
  }
  if (outputs.length === 0) return undefined;
  return {
    kind: 'degenerated-mirror',
    reference: d,
    refNode: a,
    members: mirrorMembers(d, twins, outDevices),
    outputs,
    refDegeneration: { resistor: r1.name, ohms: r1.resistance },
  };
}

/** The far end of the reference's emitter resistor: every current of the structure returns there. */
function commonNode(h: Hand): number | undefined {
  const ref = h.refT();
  const r1 = h.s.reference.degeneration ? h.topo.elementByName.get(h.s.reference.degeneration.resistor) : undefined;
  if (!r1 || r1.kind !== 'R') return undefined;
  return r1.nodes[0] === ref.common ? r1.nodes[1] : r1.nodes[1] === ref.common ? r1.nodes[0] : undefined;
}

/** A degenerated mirror needs its emitter resistors: the reference's (on its emitter) and every output's. */
function complete(h: Hand): boolean {
  const deg = h.s.reference.degeneration;
  if (!deg || !(deg.ohms > 0) || h.commonNode() === undefined) return false;
  return h.s.outputs.every((o) => o.degeneration !== undefined && o.degeneration.ohms > 0 && Number.isFinite(o.degeneration.ohms));
}

/**
 * The base node sits VBE1 + IE1·R1 above the common node, and each output carries the IC2 that makes
 * VBE2 + IE2·R2 equal to it; IREF = IC1·(1 + 1/β) + Σ IC2/β. The two are solved together (a few
 * fixed-point passes on IC1; each IC2 by a bracketed Newton solve). MOS: VGS1 + ID1·R1 = VGS2 + ID2·R2
 * with the square law, body effect from the raised sources and λ.
 */
function analyse(h: Hand, iref: number, c: Chain): ChainResult {
  const iout: Record<string, number> = nameTable();
  const edge: Record<string, number> = nameTable();
  const ref = h.dev(h.s.reference.device);
  const outs = h.outputs();
  const r1 = h.s.reference.degeneration!.ohms;
  const r1Name = h.s.reference.degeneration!.resistor;
  const refName = h.s.reference.device;
  if (h.bipolar) {
    const beta = ref.beta;
    const k1 = (beta + 1) / beta;
    const sumM = outs.reduce((a, x) => a + x.o.ratio, 0);
    let ic1 = iref / (1 + (1 + sumM) / beta);
    let vbe1 = h.vbe(ref, ic1);
    let vTop = vbe1 + ic1 * k1 * r1;
    const early: Record<string, number> = nameTable();
    for (let pass = 0; pass < 60; pass++) {
      vbe1 = h.vbe(ref, ic1);
      vTop = vbe1 + ic1 * k1 * r1;
      let ib = 0;
      for (const x of outs) {
        const r2 = x.o.degeneration!.ohms;
        const k2 = (x.p.beta + 1) / x.p.beta;
        const prev = iout[x.o.device] ?? ic1 * x.o.ratio;
        // Early effect of the output at its own VCE (emitter lifted by IE2·R2) against the reference's VCE = VBE1.
        const vce = h.outputVds(x.p.t, prev * k2 * r2);
        early[x.o.device] = vce !== undefined ? Math.max(earlyFactor(vce, vbe1, x.p.va), 1e-3) : 1;
        iout[x.o.device] = degeneratedOutput({ v: vTop, isEff: x.p.isEff * early[x.o.device], nVt: x.p.nfVt, r: r2, k: k2, guess: iout[x.o.device] ?? h.memo.get(x.o.device) });
        ib += iout[x.o.device] / x.p.beta;
      }
      // The last solved collector current is the Newton start of the next trial IREF.
      for (const x of outs) h.memo.set(x.o.device, iout[x.o.device]);
      const next = Math.max(iref - ib, 0) / k1;
      const done = Math.abs(next - ic1) <= 1e-13 * Math.max(iref, 1e-30);
      ic1 = next;
      if (done) break;
    }
    vbe1 = c.junction('', ref, ic1, 0);
    vTop = vbe1 + ic1 * k1 * r1;
    const vb = vTop;
    const ic1Now = ic1;
    c.push(() => ({
      quantity: `VBE(${refName}) + IE·${r1Name}`,
      formula: `VBE1 + IC1·(1 + 1/β)·R1: the base node above the common node (${GRAY}, emitter degeneration)`,
      substituted: `${eng(vbe1, 'V')} + ${eng(ic1Now, 'A')} × ${sig(k1, 4)} × ${eng(r1, 'Ω')}`,
      value: vb,
      unit: 'V',
      devices: [refName, r1Name],
    }));
    for (const x of outs) {
      const r2 = x.o.degeneration!.ohms;
      const r2Name = x.o.degeneration!.resistor;
      const k2 = (x.p.beta + 1) / x.p.beta;
      const i = iout[x.o.device];
      edge[x.o.device] = vTop;
      const ef = early[x.o.device] ?? 1;
      const vbe2 = vbeAt(i, x.p.isEff * ef, x.p.nfVt);
      c.push(() => ({
        quantity: `VBE(${x.o.device})`,
        formula: `NF·VT·ln(IC/IS + 1), IS scaled by area × M${ef !== 1 ? ' × (1 + (VCE2 − VBE)/VA)' : ''} (junction law)`,
        substituted: `${sig(x.p.nfVt / h.vt, 3)} × ${eng(h.vt, 'V', 4)} × ln(${eng(i, 'A')}/${sig(x.p.isEff * ef, 3)} A + 1)`,
        value: vbe2,
        unit: 'V',
        devices: [x.o.device],
      }));
      c.push(() => ({
        quantity: `IOUT(${x.o.device})`,
        formula:
          `VBE1 + IE1·R1 = VBE2 + IE2·R2 with VBE = NF·VT·ln(IC/IS + 1), IE = IC·(1 + 1/β) and IREF = IC1·(1 + 1/β) + Σ IC2/β` +
          `${ef !== 1 ? '; IS2 × (1 + (VCE2 − VBE)/VA) for the Early effect' : ''} (${GRAY}, emitter degeneration)`,
        substituted: `${eng(vTop, 'V')} = ${sig(x.p.nfVt, 4)} V × ln(IOUT/${sig(x.p.isEff * ef, 4)} A + 1) + IOUT × ${sig(k2, 4)} × ${eng(r2, 'Ω')}`,
        value: i,
        unit: 'A',
        devices: [x.o.device, r2Name],
      }));
      c.push(() => ({
        quantity: `IOUT(${x.o.device})/IREF at large drops`,
        formula: 'R1/R2: the ratio the emitter resistors set once their drops are much larger than VT (area ratio and base currents aside) (' + GRAY + ')',
        substituted: `${eng(r1, 'Ω')}/${eng(r2, 'Ω')}`,
        value: r1 / r2,
        unit: '',
        devices: [x.o.device, r1Name, r2Name],
      }));
    }
    return { stack: vTop, vControl: vbe1, iRef: ic1, iout, edge };
  }
  // MOS: gates draw nothing, ID1 = IREF.
  const vsb0 = h.vsbBase(ref);
  const vsb1 = vsb0 + iref * r1;
  const vgs1 = iref > 0 ? h.vgsWithVds(ref, iref, vsb1, (g) => g) : thresholdWithBody(ref.vto, ref.gamma, ref.phi, vsb1);
  const vTop = vgs1 + iref * r1;
  const vth1 = thresholdWithBody(ref.vto, ref.gamma, ref.phi, vsb1);
  const vsbText = h.bulkText(vsb1);
  c.push(() => ({
    quantity: `VGS(${refName})`,
    formula: 'VTH(VSB) + sqrt(2·ID/(KP·W/L·M·(1 + λ·VGS))), the source raised by ID·R1 (square law, Shichman and Hodges, IEEE JSSC, 1968)',
    substituted: `${eng(vth1, 'V')} + sqrt(2 × ${eng(iref, 'A')}/${eng(ref.kBeta, 'A/V²')})${vsbText}`,
    value: vgs1,
    unit: 'V',
    devices: [refName],
  }));
  c.push(() => ({
    quantity: `VGS(${refName}) + ID·${r1Name}`,
    formula: `VGS1 + ID1·R1: the gate node above the common node (${RAZAVI}, source degeneration)`,
    substituted: `${eng(vgs1, 'V')} + ${eng(iref, 'A')} × ${eng(r1, 'Ω')}`,
    value: vTop,
    unit: 'V',
    devices: [refName, r1Name],
  }));
  for (const x of outs) {
    const r2 = x.o.degeneration!.ohms;
    const r2Name = x.o.degeneration!.resistor;
    const p = x.p;
    const vgsAt = (i: number) => {
      const vds = h.outputVds(p.t, i * r2);
      return h.vgsWithVds(p, i, vsb0 + i * r2, (g) => (vds !== undefined ? vds : g));
    };
    const g = (i: number) => (i > 0 ? vgsAt(i) : thresholdWithBody(p.vto, p.gamma, p.phi, vsb0)) + i * r2 - vTop;
    const i = solveRising(g, vTop / r2);
    iout[x.o.device] = i;
    const vth2 = thresholdWithBody(p.vto, p.gamma, p.phi, vsb0 + i * r2);
    edge[x.o.device] = vTop - vth2;
    c.push(() => ({
      quantity: `IOUT(${x.o.device})`,
      formula: `VGS1 + ID1·R1 = VGS2 + ID2·R2, VGS = VTH(VSB) + sqrt(2·ID/(KP·W/L·M·(1 + λ·VDS))) (${RAZAVI}, source degeneration; Shichman and Hodges, 1968)`,
      substituted: `${eng(vTop, 'V')} = ${eng(i > 0 ? vgsAt(i) : vth2, 'V')} + ${eng(i, 'A')} × ${eng(r2, 'Ω')}`,
      value: i,
      unit: 'A',
      devices: [x.o.device, r2Name],
    }));
    c.push(() => ({
      quantity: `IOUT(${x.o.device})/IREF at large drops`,
      formula: 'R1/R2: the ratio the source resistors set once their drops are much larger than the overdrive (' + RAZAVI + ')',
      substituted: `${eng(r1, 'Ω')}/${eng(r2, 'Ω')}`,
      value: r1 / r2,
      unit: '',
      devices: [x.o.device, r1Name, r2Name],
    }));
  }
  return { stack: vTop, vControl: vgs1, iRef: iref, iout, edge };
}

/** A MOS degenerated mirror's gate node depends on the reference alone (gates draw no current): VGS1 + ID1·R1 in closed form. */
function stackAt(h: Hand, iref: number): number | undefined {
  const deg = h.s.reference.degeneration;
  if (h.bipolar || !deg) return undefined;
  const ref = h.dev(h.s.reference.device);
  const vsb1 = h.vsbBase(ref) + iref * deg.ohms;
  return h.vgsWithVds(ref, iref, vsb1, (g) => g) + iref * deg.ohms;
}

export const degeneratedMirror: KindModule = {
  id: 'degenerated-mirror',
  name: 'emitter/source-degenerated current mirror',
  outputName: 'degenerated output',
  summary: 'Emitter (source) resistors on the reference and every output to one common node; the ratio tends to R1/R2 once the resistor drops are much larger than VT (the overdrive).',
  technologies: ['npn', 'pnp', 'nmos', 'pmos'],
  seeds: 'diode-connected',
  recognise,
  referenceJunctions: 1,
  parallelReference: true,
  commonNode,
  complete,
  analyse,
  stackAt,
  stackFormula: (h, vName) => `(${vName}1 + ${h.bipolar ? 'IE1' : 'ID1'}·${h.s.reference.degeneration?.resistor ?? 'R1'})`,
  shortcut: (h, x) => {
    // The reference's emitter resistor is in series with the feed once VBE is fixed at 0.7 V (base current neglected).
    const re = h.s.reference.degeneration?.ohms ?? 0;
    const r1 = h.s.reference.degeneration?.resistor ?? 'R1';
    return {
      quantity: 'IREF (0.7 V shortcut)',
      formula: `(V+ − V− − 0.7 V)/(R + ${r1}), base current neglected (common practice)`,
      substituted: `(${x.supplyText} − 0.7 V)/(${eng(x.ohms, 'Ω')} + ${eng(re, 'Ω')})`,
      value: Math.max((x.available - 0.7) / (x.ohms + re), 0),
      unit: 'A',
    };
  },
  outputResistance: (c, o, out, i) => {
    if (!o.degeneration) return out.ro;
    // Source: Gray et al., ch. 3 — degenerated output with a base-side resistance RB (from memory; node analysis in
    // formulas.ts). RB is the reference side seen from the base node: 1/(gm1 + 1/rπ1) + R1 of the diode-connected
    // reference with its emitter resistor, in parallel with the feed. A MOSFET's source resistor also moves its
    // VBS, so gm + gmb takes the place of gm (Razavi, ch. 3, source degeneration with body effect; from memory).
    const par = (a: number, b: number) => (a >= UNBOUNDED_OHMS ? b : b >= UNBOUNDED_OHMS ? a : (a * b) / (a + b));
    const q1 = c.smallSignal(c.s.reference.device, c.irefOr(i));
    const r1 = c.s.reference.degeneration?.ohms ?? 0;
    const diode = q1.gm > 0 ? 1 / (q1.gm + (Number.isFinite(q1.rpi) && q1.rpi > 0 ? 1 / q1.rpi : 0)) + r1 : UNBOUNDED_OHMS;
    return degeneratedRoWithBase(out.ro, out.gm + out.gmb, o.degeneration.ohms, out.rpi, par(diode, c.feedOhms()));
  },
  ratio: (c, o) => {
    const s = c.s;
    const r1 = s.reference.degeneration?.ohms;
    if (r1 === undefined || !o.degeneration) return undefined;
    const resistorRatio = r1 / o.degeneration.ohms;
    if (Math.abs(o.ratio - 1) < 1e-9 && Math.abs(resistorRatio - 1) < 1e-9) return undefined;
    const est = c.estimate;
    const value = est && est.irefFrom !== 'unknown' ? `; by hand IOUT = ${eng(est.iout[o.device] ?? 0, 'A')} against IREF = ${eng(est.iref, 'A')} (1:${sig((est.iout[o.device] ?? 0) / (est.iref || 1))})` : '';
    const geometry = Math.abs(o.ratio - 1) < 1e-9 ? '' : ` and ${sig(o.ratio)} by ${c.bipolar ? 'area × M' : '(W/L) × M'}`;
    return {
      message: `${o.device} is a ratioed output of the ${degeneratedMirror.name} on ${s.reference.device}: ${s.reference.degeneration!.resistor}/${o.degeneration.resistor} = ${eng(r1, 'Ω')}/${eng(o.degeneration.ohms, 'Ω')} = ${sig(resistorRatio)}${geometry}. IOUT/IREF tends to R1/R2 when the resistor drops are much larger than ${c.bipolar ? 'VT' : 'the overdrive'}${value}.`,
      data: { device: o.device, ratio: o.ratio, resistorRatio, iout: est?.iout[o.device] },
    };
  },
  earlyInFormula: true,
  simplifications: () => 'the simplifications of the degenerated-mirror equation (equal-beta base currents, Early effect only through the output)',
};

// Judges for bipolar and MOS transistors: reversed conduction, current sources out of their region, mirror lines taken over, emitter–base breakdown, blocked branches.

import type { Bjt, Element, Mosfet } from '../../circuit';
import { formatMeasured, formatSigned } from '../../fixes/format';
import type { BjtRecord, DeviceRecord, MosRecord } from '../../solve/types';
import type { Transistor } from '../../structures/topology';
import { judgeBlockedBranch } from './branch';
import type { JudgeContext, TransistorRole } from './context';

/**
 * Reverse voltage beyond which an emitter–base junction without a rating of its own is taken
 * to break down: small-signal bipolar datasheets give VEBO = 5–6 V (common practice, from
 * memory), so anything beyond 5 V is outside what such a part is rated for.
 */
export const EMITTER_BASE_BREAKDOWN_V = 5;

/** One judging pass's memory shared by the judges (so a branch or a line is reported once). */
export interface JudgeMemory {
  /** Branch keys already reported as blocked. */
  branches: Set<string>;
  /** Per technology: how many conducting transistors there are and how many conduct reversed. */
  reversedCount?: Map<string, { conducting: number; reversed: number }>;
}

const V = (x: number) => formatMeasured(x, 'V');
const SV = (x: number) => formatSigned(x, 'V');
const A = (x: number) => formatMeasured(x, 'A');

function upper(tech: string): string {
  return tech.toUpperCase();
}

/** Judges one BJT at the operating point. */
export function judgeBjt(el: Bjt, rec: BjtRecord, ctx: JudgeContext, memory: JudgeMemory): void {
  const t = ctx.transistorOf(el);
  if (!t) return;
  const s = rec.polarity === 'pnp' ? -1 : 1;
  // Junction voltages in the device's own polarity (positive = forward) and their names.
  const vbe = s * rec.vbe;
  const vbc = s * rec.vbc;
  const be = s > 0 ? 'VBE' : 'VEB';
  const bc = s > 0 ? 'VBC' : 'VCB';
  const off = ctx.isOff([rec.ic, rec.ib, rec.ie], Math.abs(rec.vbe) + Math.abs(rec.vbc));

  // Emitter–base breakdown is a matter of voltage, whatever the currents.
  if (vbe < -EMITTER_BASE_BREAKDOWN_V) {
    const swapped = vbc > 0 || rec.region === 'reverse-active';
    ctx.emit(
      'junction-beyond-breakdown',
      el,
      `${el.name}'s emitter–base junction is reverse-biased by ${V(-vbe)} (${be} = ${SV(vbe)}), beyond the 5–6 V small-signal emitter–base junctions are rated for (VEBO; common practice): a real part breaks down there and conducts, so this operating point is not what it would do.` +
        (swapped ? ' Its collector and emitter look swapped: the emitter sits where the collector should.' : ` Check what holds its emitter at ${V(ctx.v(t.common))} and its base at ${V(ctx.v(t.ctrl))}.`),
      { junction: 'emitter-base', reverseV: -vbe, limitV: EMITTER_BASE_BREAKDOWN_V, limitFrom: 'common-practice' },
    );
  }

  if (off) {
    if (!blockedBranchApplies(ctx, t)) return;
    const why = vbe <= 0 ? `its emitter–base junction is not forward-biased: ${be} = ${SV(vbe)}` : `${be} = ${V(vbe)}, below the about 0.6 V a silicon junction needs to conduct`;
    judgeBlockedBranch(
      ctx,
      {
        element: el,
        enters: s > 0 ? t.out : t.common,
        leaves: s > 0 ? t.common : t.out,
        enterName: s > 0 ? 'collector' : 'emitter',
        leaveName: s > 0 ? 'emitter' : 'collector',
        why,
        reversedHint: `its collector and emitter look swapped, or the supply polarity is reversed`,
        forwardHint: `Check what drives its base ${ctx.nodeName(t.ctrl)} (at ${V(ctx.v(t.ctrl))})`,
      },
      memory.branches,
    );
    return;
  }

  if (rec.region === 'reverse-active') {
    const polarity = supplyReversed(ctx, t, memory);
    const collectorRail = ctx.rail(t.out);
    ctx.emit(
      'device-reversed',
      el,
      `${el.name} (${upper(rec.polarity)}) is reverse-active: its base–collector junction is forward-biased (${bc} = ${SV(vbc)}) and its emitter–base junction is not (${be} = ${SV(vbe)}), so it conducts with collector and emitter exchanged, at the reverse current gain BR = ${el.model.params.BR ?? 1} instead of BF = ${el.model.params.BF ?? 100}; it carries IC = ${A(rec.ic)}. ` +
        (polarity
          ? `Every conducting ${upper(rec.polarity)} in the circuit is reversed the same way, so the supply polarity looks reversed.`
          : `Its collector and emitter look swapped${collectorRail ? `: the collector sits on the rail ${collectorRail.node} (${V(collectorRail.volts)}), where ${s > 0 ? 'an NPN' : 'a PNP'}'s emitter would go` : ''}.`),
      { region: rec.region, vbe: rec.vbe, vbc: rec.vbc, ic: rec.ic, likelyCause: polarity ? 'supply-polarity' : 'collector-emitter-swapped' },
    );
    return;
  }

  if (rec.region === 'saturation') judgeCurrentSource(ctx, el, t, 'saturated', `${bc} = ${SV(vbc)}, ${V(vbc)} past the forward-active edge (${bc} ≤ 0)`, { region: rec.region, vbc: rec.vbc, pastEdgeV: vbc });
  judgeMirrorLine(ctx, el, t);
}

/** Judges one MOSFET at the operating point. */
export function judgeMosfet(el: Mosfet, rec: MosRecord, ctx: JudgeContext, memory: JudgeMemory): void {
  const t = ctx.transistorOf(el);
  if (!t) return;
  const s = rec.polarity === 'pmos' ? -1 : 1;
  const vgs = s * rec.vgs;
  const vds = s * rec.vds;
  const off = ctx.isOff([rec.id], Math.abs(rec.vds));
  const gs = s > 0 ? 'VGS' : 'VSG';
  const ds = s > 0 ? 'VDS' : 'VSD';

  if (off) {
    if (!blockedBranchApplies(ctx, t)) return;
    const vth = s * rec.vth;
    judgeBlockedBranch(
      ctx,
      {
        element: el,
        enters: s > 0 ? t.out : t.common,
        leaves: s > 0 ? t.common : t.out,
        enterName: s > 0 ? 'drain' : 'source',
        leaveName: s > 0 ? 'source' : 'drain',
        why: `${gs} = ${V(vgs)}, below its threshold of ${V(vth)}`,
        reversedHint: `its drain and source look swapped, or the supply polarity is reversed`,
        forwardHint: `Check what drives its gate ${ctx.nodeName(t.ctrl)} (at ${V(ctx.v(t.ctrl))})`,
      },
      memory.branches,
    );
    return;
  }

  // The level-1 channel is symmetric, but a bulk tied to the source pin forward-biases the bulk–drain junction when the pins are reversed.
  if (vds < 0 && t.bulk === t.common) {
    const polarity = supplyReversed(ctx, t, memory);
    ctx.emit(
      'device-reversed',
      el,
      `${el.name} (${upper(rec.polarity)}) conducts with its drain ${V(-vds)} ${s > 0 ? 'below' : 'above'} its source (${ds} = ${SV(vds)}) while its bulk is tied to the source pin: a real part's bulk–drain junction (its body diode) is then forward-biased and conducts beside the channel, so this operating point is not what it would do. ` +
        (polarity ? `Every conducting ${upper(rec.polarity)} in the circuit is reversed the same way, so the supply polarity looks reversed.` : 'Its drain and source look swapped.'),
      { region: rec.region, vds: rec.vds, id: rec.id, likelyCause: polarity ? 'supply-polarity' : 'drain-source-swapped' },
    );
    return;
  }

  if (rec.region === 'triode') {
    judgeCurrentSource(ctx, el, t, 'in triode', `${ds} = ${V(vds)}, ${V(rec.vov - vds)} below its overdrive ${s > 0 ? 'VGS − VTH' : 'VSG − |VTH|'} = ${V(rec.vov)}`, {
      region: rec.region,
      vds: rec.vds,
      overdriveV: rec.vov,
      pastEdgeV: rec.vov - vds,
    });
  }
  judgeMirrorLine(ctx, el, t);
}

/** Off-device branch checks apply to devices outside recognised structures whose control is not held at a rail on purpose. */
function blockedBranchApplies(ctx: JudgeContext, t: Transistor): boolean {
  if (ctx.inStructure(t.name)) return false;
  // A base or gate held by a source is switched off on purpose (a logic level, a disabled cell).
  return !ctx.rail(t.ctrl);
}

/** What a role means, in words for the message. */
function roleText(ctx: JudgeContext, t: Transistor, role: TransistorRole): string {
  const ctrlWord = t.element.kind === 'Q' ? 'base' : 'gate';
  const commonWord = t.element.kind === 'Q' ? 'emitter' : 'source';
  if (role === 'cascode') {
    const below = ctx.transistorsAtOutput(t.common).find((x) => x !== t && x.tech === t.tech);
    return `is a cascode (its ${commonWord} is the ${t.element.kind === 'Q' ? 'collector' : 'drain'} of ${below?.name ?? 'another device'})`;
  }
  const line = ctx.diodeConnectedAt(t.ctrl, t.tech, t);
  if (line) return `acts as a current source (its ${ctrlWord} is on the mirror line ${ctx.nodeName(t.ctrl)} of the diode-connected ${line.name})`;
  if (ctx.isMirrorLine(t.ctrl, t.tech, t)) return `acts as a current source (its ${ctrlWord} is on the mirror line ${ctx.nodeName(t.ctrl)})`;
  if (ctx.isBiasNode(t.ctrl)) return `acts as a current source (its ${ctrlWord} is held at the bias voltage ${ctx.nodeName(t.ctrl)} = ${V(ctx.v(t.ctrl))})`;
  return `acts as a current source (its ${commonWord} is degenerated by a resistor to a rail)`;
}

/** `current-source-out-of-region` for a current source or cascode outside recognised mirrors' outputs. */
function judgeCurrentSource(ctx: JudgeContext, el: Bjt | Mosfet, t: Transistor, regionWord: string, detail: string, data: Record<string, unknown>): void {
  // A recognised structure's devices are judged by its own checks, which know where its design puts each one
  // (the improved Wilson's input device sits at VBC ≈ 0 on purpose).
  if (ctx.inStructure(el.name)) return;
  const role = ctx.role(t);
  if (role !== 'current-source' && role !== 'cascode') return;
  const outWord = t.element.kind === 'Q' ? 'collector' : 'drain';
  ctx.emit(
    'current-source-out-of-region',
    el,
    `${el.name} ${roleText(ctx, t, role)} but is ${regionWord}: ${detail}. Its current is then set by what its ${outWord} ${ctx.nodeName(t.out)} (at ${V(ctx.v(t.out))}) connects to, not by its ${t.element.kind === 'Q' ? 'base' : 'gate'}.`,
    { role, ...data },
  );
}

/**
 * `mirror-line-shunted`: a conducting transistor whose output sits on the control line of a
 * diode-connected device of its own kind and takes (nearly) all of that device's current. A
 * healthy circuit never sinks the reference current of a mirror into another device of the same
 * kind; its output and control pins swapped do exactly that.
 */
function judgeMirrorLine(ctx: JudgeContext, el: Bjt | Mosfet, t: Transistor): void {
  if (t.ctrl === t.out) return;
  const diode = ctx.diodeConnectedAt(t.out, t.tech, t);
  if (!diode) return;
  const own = mainCurrent(ctx.record(el.name));
  const starved = mainCurrent(ctx.record(diode.name));
  if (!(own > 0) || starved > 0.1 * own) return;
  const outWord = t.element.kind === 'Q' ? 'collector' : 'drain';
  const ctrlWord = t.element.kind === 'Q' ? 'base' : 'gate';
  ctx.emit(
    'mirror-line-shunted',
    el,
    `${el.name}'s ${outWord} sits on ${ctx.nodeName(t.out)}, the ${ctrlWord} line of the diode-connected ${diode.name}, and takes the current meant for it: ${el.name} carries ${A(own)} while ${diode.name} carries ${A(starved)}, so ${ctx.nodeName(t.out)} sits at ${V(ctx.v(t.out))}. Its ${outWord} and ${ctrlWord} look swapped: its ${ctrlWord} is on ${ctx.nodeName(t.ctrl)} (at ${V(ctx.v(t.ctrl))}), where a mirror output's ${outWord} would go.`,
    { line: ctx.nodeName(t.out), diodeConnected: diode.name, currentA: own, diodeCurrentA: starved, likelyCause: `${outWord}-${ctrlWord}-swapped` },
    ctx.related([{ element: diode.element as Element, message: `${diode.name}: the diode-connected device whose current is taken` }]),
  );
}

/** Collector or drain current magnitude of a transistor record (0 for anything else). */
function mainCurrent(rec: DeviceRecord | undefined): number {
  if (!rec) return 0;
  if (rec.type === 'bjt') return Math.abs(rec.ic);
  if (rec.type === 'mosfet') return Math.abs(rec.id);
  return 0;
}

/** Whether every conducting transistor of `t`'s technology conducts reversed (then the supply, not one device's pins, is the likely cause). */
function supplyReversed(ctx: JudgeContext, t: Transistor, memory: JudgeMemory): boolean {
  if (!memory.reversedCount) {
    const counts = new Map<string, { conducting: number; reversed: number }>();
    for (const x of ctx.topo.transistors) {
      const rec = ctx.record(x.name);
      let conducting = false;
      let reversed = false;
      if (rec?.type === 'bjt') {
        conducting = !ctx.isOff([rec.ic, rec.ib, rec.ie], Math.abs(rec.vbe) + Math.abs(rec.vbc));
        reversed = rec.region === 'reverse-active';
      } else if (rec?.type === 'mosfet') {
        conducting = !ctx.isOff([rec.id], Math.abs(rec.vds));
        reversed = (rec.polarity === 'pmos' ? -rec.vds : rec.vds) < 0 && x.bulk === x.common;
      }
      if (!conducting) continue;
      const c = counts.get(x.tech) ?? { conducting: 0, reversed: 0 };
      c.conducting++;
      if (reversed) c.reversed++;
      counts.set(x.tech, c);
    }
    memory.reversedCount = counts;
  }
  const c = memory.reversedCount.get(t.tech);
  return !!c && c.conducting >= 2 && c.reversed === c.conducting;
}

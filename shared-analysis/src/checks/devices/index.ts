// Every device judged at the operating point: a registry of per-kind judges, the finding codes they raise, and the power check they share.

import type { Element } from '../../circuit';
import { formatMeasured } from '../../fixes/format';
import type { DeviceRecord } from '../../solve/types';
import type { Finding, Severity } from '../../types';
import { JudgeContext, type DeviceCheckContext } from './context';
import { judgeDiode } from './diode';
import { judgeJfet } from './jfet';
import { isPowered } from '../plausibility';
import { dissipation, powerLimit } from './power';
import { judgeBjt, judgeMosfet, type JudgeMemory } from './transistors';
import { pushAll } from '../../arrays';
import { nameTable } from '../../names';

export type { DeviceCheckContext } from './context';
export { dissipation, powerLimit } from './power';

/** Every finding code the device judges raise, with its default severity and a one-line summary for the README. */
export const DEVICE_CODES: Record<string, { severity: Severity; summary: string }> = {
  'device-reversed': {
    severity: 'error',
    summary: 'A transistor conducts the wrong way round: a reverse-active BJT, or a MOSFET whose drain sits on the source side with its bulk tied to the source pin; names the pins that look swapped, or the supply polarity when every device of the kind is reversed.',
  },
  'current-source-out-of-region': {
    severity: 'warning',
    summary: 'A transistor that acts as a current source or cascode (base or gate on a mirror line or a bias voltage, degenerated, or stacked on another device) is saturated (BJT) or in triode (MOS), outside any recognised mirror.',
  },
  'branch-blocked': {
    severity: 'warning',
    summary: 'An off transistor or diode is the only path of a series branch between two rails, so the branch carries no current; names the branch, the voltages and the likely wiring mistake.',
  },
  'mirror-line-shunted': {
    severity: 'error',
    summary: 'A transistor’s collector or drain sits on the base or gate line of a diode-connected device of its kind and takes its current; its output and control pins look swapped.',
  },
  'junction-beyond-breakdown': {
    severity: 'error',
    summary: 'A BJT’s emitter–base junction is reverse-biased beyond the 5–6 V such junctions are rated for (common practice); the solved point is then not what the part does, and the pins often look swapped.',
  },
  'jfet-gate-forward': {
    severity: 'warning',
    summary: 'A JFET’s gate-source or gate-drain junction is forward-biased and its gate draws more than 1 µA; a JFET’s gate is meant to stay reverse-biased.',
  },
  'power-over-rating': {
    severity: 'warning',
    summary: 'A device or resistor dissipates more than its rating: its `RATEDPOWER=` (instance or model), else the setting (0.25 W for a resistor, 0.5 W for a small-signal transistor or diode; common practice).',
  },
  'device-findings-limited': {
    severity: 'info',
    summary: 'More devices than are listed one by one share a device finding; the rest are counted in one summary.',
  },
};

/** One device kind's judge: how much power it dissipates, and what its regions must be. New kinds (JFET) register here. */
export interface DeviceJudge {
  /** The element letter the judge handles. */
  kind: string;
  /** Judges one element at its record; absent for kinds that only have their power checked. */
  judge?: (el: Element, rec: DeviceRecord, ctx: JudgeContext, memory: JudgeMemory) => void;
}

/** The judges, by element letter. */
export const DEVICE_JUDGES: Record<string, DeviceJudge> = nameTable({
  Q: { kind: 'Q', judge: (el, rec, ctx, memory) => el.kind === 'Q' && rec.type === 'bjt' && judgeBjt(el, rec, ctx, memory) },
  M: { kind: 'M', judge: (el, rec, ctx, memory) => el.kind === 'M' && rec.type === 'mosfet' && judgeMosfet(el, rec, ctx, memory) },
  D: { kind: 'D', judge: (el, rec, ctx, memory) => el.kind === 'D' && rec.type === 'diode' && judgeDiode(el, rec, ctx, memory) },
  J: { kind: 'J', judge: (el, rec, ctx) => el.kind === 'J' && rec.type === 'jfet' && judgeJfet(el, rec, ctx) },
  R: { kind: 'R' },
});

/** Located findings of one code beyond this count are folded into one summary finding. */
export const MAX_FINDINGS_PER_CODE = 20;

/**
 * Judges every device of a converged operating point: each kind's judge for its regions and
 * wiring, and the dissipation of every device and resistor against its limit. A device that is
 * off (every terminal current below 1 pA) gets no region finding. Returns nothing for an
 * operating point that did not converge. Never throws: a failing judge skips its device.
 */
export function judgeDevices(ctx: DeviceCheckContext): Finding[] {
  return limitDeviceFlood(judgeEachDevice(ctx) ?? []);
}

/**
 * What `judgeDevices` finds, element by element (in the circuit's order) and before the flood limit
 * (`limitDeviceFlood`): each entry the findings raised while judging that element. With `only`, only the
 * elements it accepts are judged (the others' entries stay empty). Undefined for an operating point that
 * did not converge or a circuit that is not powered, where nothing is judged.
 */
export function judgeEachDevice(ctx: DeviceCheckContext, only?: (element: number) => boolean): (Finding[] | undefined)[] | undefined {
  const { circuit, op } = ctx;
  // An unpowered circuit has every device at zero bias; `circuit-not-powered` says so once instead.
  if (!op.converged || !isPowered(circuit)) return undefined;
  const judges = new JudgeContext(circuit, op, ctx.structures, ctx.options, DEVICE_CODES);
  const memory: JudgeMemory = { branches: new Set() };
  const elements = circuit.elements;
  const each: (Finding[] | undefined)[] = new Array(elements.length);
  for (let i = 0; i < elements.length; i++) {
    const el = elements[i];
    const judge = DEVICE_JUDGES[el.kind];
    if (!judge || (only && !only(i))) continue;
    const from = judges.findings.length;
    try {
      if (judge.judge) {
        const rec = judges.recordAt(i);
        if (!rec) continue;
        judges.judged = i;
        judge.judge(el, rec, judges, memory);
        judgePower(el, dissipation(rec), judges);
      } else {
        // A kind judged for its power alone (a resistor): its record is not built, only its power read.
        judgePower(el, judges.powerAt(i), judges);
      }
    } catch {
      // One device's defect must not take the others (or the editor) down.
    }
    if (judges.findings.length > from) each[i] = judges.findings.slice(from);
  }
  return each;
}

/** The findings of `judgeEachDevice` in the circuit's order, with the flood limit applied. */
export function limitDeviceFlood(each: readonly (Finding[] | undefined)[]): Finding[] {
  const all: Finding[] = [];
  for (const list of each) if (list) pushAll(all, list);
  return limitFlood(all);
}

/** `power-over-rating` when an element dissipates more than its limit (`p`, watts: its `dissipation`). */
function judgePower(el: Element, p: number | undefined, ctx: JudgeContext): void {
  const limit = powerLimit(el, ctx.options);
  if (p === undefined || !limit || !(p > limit.watts)) return;
  const whence =
    limit.from === 'instance'
      ? 'its RATEDPOWER'
      : limit.from === 'model'
        ? 'the RATEDPOWER of its model'
        : el.kind === 'R'
          ? 'the default for an ordinary resistor, common practice; give a larger part its RATEDPOWER= on the card'
          : 'the default for a small-signal part, common practice; give a power part its RATEDPOWER= on the card or model';
  const ratio = Number((p / limit.watts).toPrecision(3));
  // A limit scaled almost to nothing (M=1e-320) gives a ratio past any number: say "above" instead.
  const times = Number.isFinite(ratio) ? `${ratio}× its limit` : 'above its limit';
  ctx.emit(
    'power-over-rating',
    el,
    `${el.name} dissipates ${formatMeasured(p, 'W')}, ${times} of ${formatMeasured(limit.watts, 'W')} (${whence}).`,
    { powerW: p, limitW: limit.watts, limitFrom: limit.from },
  );
}

/** Keeps the first MAX_FINDINGS_PER_CODE findings of each code and counts the rest in one summary on the first. */
function limitFlood(findings: Finding[]): Finding[] {
  const byCode = new Map<string, Finding[]>();
  for (const f of findings) {
    const list = byCode.get(f.code);
    if (list) list.push(f);
    else byCode.set(f.code, [f]);
  }
  const out: Finding[] = [];
  for (const [code, list] of byCode) {
    pushAll(out, list.slice(0, MAX_FINDINGS_PER_CODE));
    if (list.length > MAX_FINDINGS_PER_CODE) {
      const rest = list.slice(MAX_FINDINGS_PER_CODE);
      const first = list[0];
      out.push({
        code: 'device-findings-limited',
        severity: DEVICE_CODES['device-findings-limited'].severity,
        message: `${rest.length} more devices have the same ${code} finding as the ${MAX_FINDINGS_PER_CODE} listed; the first of them is ${String(rest[0].data?.['device'] ?? '')}.`,
        uri: first.uri,
        span: first.span,
        data: { code, more: rest.length, devices: rest.slice(0, 100).map((f) => f.data?.['device']) },
      });
    }
  }
  return out;
}

// End-of-line bias labels for device cards: currents, terminal voltages, out-of-region marks, and one label per card however many instances it has.

import type { Analysis } from '../analysis';
import type { Element } from '../circuit';
import type { DeviceRecord } from '../solve/types';
import type { Span } from '../types';
import { elementsOfCard, instancePrefix } from './document-index';
import { formatQuantity } from '../view/format';
import { dissipation } from '../checks/devices/power';
import { recordIsOff } from '../checks/devices/context';
import { maxOf } from '../arrays';
import { derivedVoltageLabel } from './structure-words';
import { UNLIMITED, type WorkBudget } from './budget';

/** How much a label shows. */
export type InlayDetail = 'off' | 'terse' | 'full';

/** Where a label sits: right after the card's last field, or after its end-of-line comment (so comments stay aligned). */
export type InlayPlacement = 'afterCode' | 'afterComment';

/** One label, placed at `offset` (the end of a device card). */
export interface InlayHintData {
  offset: number;
  label: string;
  tooltip?: string;
}

/**
 * The longest label written, in characters. VS Code cuts an inlay hint at
 * `editor.inlayHints.maximumLength`, 43 by default (read from the editor's own settings
 * schema); a label is built to fit rather than be cut: the power, then the voltage, are left
 * out (they stay in the tooltip and the hover).
 */
export const MAX_LABEL_LENGTH = 43;

/**
 * The mark in front of a transistor that is out of its active region (a BJT not forward-active,
 * a MOSFET not saturated), so such a label reads differently from a healthy one without colour.
 */
export const OUT_OF_REGION_MARK = '◆';

/** Instances a tooltip lists one by one before it summarises the rest (worst first). */
const MAX_TOOLTIP_INSTANCES = 64;

/**
 * Labels for the device cards of `uri` that overlap `span`. One work unit per structure and per
 * instance labelled; when `budget` runs out the labels of the cards reached so far are returned
 * (the editor asks again for what it shows next).
 */
export function inlayHints(analysis: Analysis, uri: string, span: Span, detail: InlayDetail, placement: InlayPlacement = 'afterCode', budget: WorkBudget = UNLIMITED): InlayHintData[] {
  if (detail === 'off') return [];
  const doc = analysis.documents[uri];
  const op = analysis.operatingPoint;
  if (!doc || !op) return [];
  const out: InlayHintData[] = [];
  const cards = doc.cards;
  // Cards are in document order: skip to the first that can overlap the span.
  let lo = 0;
  let hi = cards.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (cards[mid].span.end < span.start) lo = mid + 1;
    else hi = mid;
  }
  // The voltages a structure produces (VBG, a VBE multiplier's voltage) ride on its reference device's label.
  const produced = new Map<string, string>();
  if (!budget.spend(analysis.structures.length)) return out;
  for (const s of analysis.structures) {
    const label = derivedVoltageLabel(s);
    if (label) produced.set(s.reference.device, label);
  }
  const partsOf = (el: Element, d: InlayDetail): Part[] | undefined => {
    const parts = labelParts(el, op.devices[el.name], d);
    const extra = produced.get(el.name);
    // Left out after the power and the terminal voltage when the label is too long.
    return parts !== undefined && extra ? [...parts, { text: extra, drop: 0.5 }] : parts;
  };
  const unsolved = op.converged ? undefined : 'The DC solve did not converge; this is its last iteration.';
  for (let i = lo; i < cards.length; i++) {
    const card = cards[i];
    if (card.span.start > span.end) break;
    if (card.kind !== 'element') continue;
    const elements = elementsOfCard(analysis, uri, card);
    if (!budget.spend(1 + elements.length)) break;
    const labelled = elements
      .map((el) => ({ el, rec: op.devices[el.name], parts: partsOf(el, detail) }))
      .filter((x): x is { el: Element; rec: DeviceRecord; parts: Part[] } => x.parts !== undefined && x.rec !== undefined);
    if (labelled.length === 0) continue;
    const code = labelEnd(doc.text, card);
    const offset = placement === 'afterComment' ? lineEnd(doc.text, code) : code;
    if (labelled.length === 1 && !instancePrefix(labelled[0].el)) {
      out.push({ offset, label: fit(labelled[0].parts, ''), tooltip: unsolved });
      continue;
    }
    out.push(instancesHint(labelled, offset, unsolved));
  }
  return out;
}

/** One label for a card flattened into several subcircuit instances: the count and the worst instance, every instance in the tooltip. */
function instancesHint(labelled: { el: Element; rec: DeviceRecord; parts: Part[] }[], offset: number, note: string | undefined): InlayHintData {
  const ranked = [...labelled].sort((a, b) => severity(b.rec) - severity(a.rec));
  const worst = ranked[0];
  const texts = labelled.map((x) => fit(x.parts, ''));
  const same = texts.every((t) => t === texts[0]);
  // The instance names the worst copy (`XADC2`); the tooltip gives the full hierarchical names.
  const name = instancePrefix(worst.el).replace(/\.$/, '') || worst.el.name;
  const count = `×${labelled.length}`;
  let label: string;
  if (same && labelled.length > 1) label = fit(worst.parts, `${count}: `);
  else {
    const prefix = `${count}, worst ${name}: `;
    // A name too long for the label moves to the tooltip rather than pushing the numbers out.
    label = fit(worst.parts, prefix);
    if ([...label].length > MAX_LABEL_LENGTH) label = fit(worst.parts, `${count}, worst: `);
  }
  // Every instance in document order, up to a bound: a card instantiated a hundred thousand times lists the worst first.
  const listed = labelled.length <= MAX_TOOLTIP_INSTANCES ? labelled : ranked.slice(0, MAX_TOOLTIP_INSTANCES);
  const lines = listed.map((x) => `${x.el === worst.el && !same ? '▸ ' : ''}${x.el.name}: ${x.parts.map((p) => p.text).join(' · ')}`);
  if (listed.length < labelled.length) lines.push(`… and ${labelled.length - listed.length} more (the hover on the card shows each)`);
  const heading = same ? `${labelled.length} instances, all alike:` : `${labelled.length} instances; the worst (▸) is labelled:`;
  return { offset, label, tooltip: [heading, ...lines, ...(note ? [note] : [])].join('\n') };
}

/** A label's pieces in order, each with the rank at which it is dropped when the label is too long (higher goes first). */
interface Part {
  text: string;
  drop: number;
}

/** Joins `parts` after `prefix`, leaving out the most droppable parts until the label fits {@link MAX_LABEL_LENGTH}. */
function fit(parts: Part[], prefix: string): string {
  let kept = parts;
  const text = () => prefix + kept.map((p) => p.text).join(' · ');
  while ([...text()].length > MAX_LABEL_LENGTH) {
    const top = maxOf(kept.map((p) => p.drop));
    if (top <= 0) break;
    const k = kept.findIndex((p) => p.drop === top);
    kept = kept.filter((_, j) => j !== k);
  }
  return text();
}

/** How badly a device needs attention, for picking the worst instance: out of region first, then least headroom, then most power. */
function severity(rec: DeviceRecord): number {
  if (rec.type === 'bjt' || rec.type === 'mosfet' || rec.type === 'jfet') {
    if (recordIsOff(rec)) return 1e6;
    if (outOfRegion(rec)) return 2e6 - headroom(rec);
    return 1e3 - headroom(rec);
  }
  return Math.abs(dissipation(rec) ?? 0);
}

/** Volts inside the active region (negative: beyond its edge). */
function headroom(rec: DeviceRecord): number {
  if (rec.type === 'bjt') return rec.polarity === 'npn' ? -rec.vbc : rec.vbc;
  if (rec.type === 'mosfet') return Math.abs(rec.vds) - rec.vov;
  if (rec.type === 'jfet') return Math.abs(rec.vds) - ((rec.polarity === 'pjf' ? -rec.vgs : rec.vgs) - rec.vto);
  return 0;
}

function outOfRegion(rec: DeviceRecord): boolean {
  if (recordIsOff(rec)) return false;
  if (rec.type === 'bjt') return rec.region !== 'forward-active';
  if (rec.type === 'mosfet' || rec.type === 'jfet') return rec.region !== 'saturation';
  return false;
}

/** The end of the card's last field, so the label sits before any end-of-line comment. */
function labelEnd(text: string, card: { span: Span; tokens: { span: Span }[] }): number {
  let end = card.span.start;
  for (const t of card.tokens) end = Math.max(end, t.span.end);
  if (end === card.span.start) {
    end = card.span.end;
    while (end > card.span.start && /\s/.test(text[end - 1])) end--;
  }
  return end;
}

/** The end of the line `offset` is on, before trailing blanks: after an end-of-line comment when there is one. */
function lineEnd(text: string, offset: number): number {
  let end = text.indexOf('\n', offset);
  if (end < 0) end = text.length;
  while (end > offset && /\s/.test(text[end - 1])) end--;
  return end;
}

function labelParts(el: Element, rec: DeviceRecord | undefined, detail: InlayDetail): Part[] | undefined {
  const parts = baseParts(el, rec, detail);
  if (parts === undefined || detail !== 'full' || !(el.kind === 'R' || el.kind === 'D' || el.kind === 'Q' || el.kind === 'M' || el.kind === 'J')) return parts;
  const p = dissipation(rec);
  return p === undefined ? parts : [...parts, { text: formatQuantity(p, 'W'), drop: 2 }];
}

/** The region piece of a transistor's label: nothing when it is where it should be, `off`, or the marked region. */
function regionPart(rec: DeviceRecord & { region: string }, active: string): Part[] {
  if (recordIsOff(rec)) return [{ text: 'off', drop: 0 }];
  if (rec.region === active) return [];
  return [{ text: `${OUT_OF_REGION_MARK} ${rec.region}`, drop: 0 }];
}

function baseParts(el: Element, rec: DeviceRecord | undefined, detail: InlayDetail): Part[] | undefined {
  if (!rec) return undefined;
  const full = detail === 'full';
  if (rec.type === 'bjt') {
    const i = formatQuantity(Math.abs(rec.ic), 'A');
    const region = regionPart(rec, 'forward-active');
    return full ? [...region, { text: `IC ${i}`, drop: 0 }, { text: `VCE ${formatQuantity(rec.vce, 'V')}`, drop: 1 }] : [...region, { text: i, drop: 0 }];
  }
  if (rec.type === 'mosfet') {
    const i = formatQuantity(Math.abs(rec.id), 'A');
    const region = regionPart(rec, 'saturation');
    return full ? [...region, { text: `ID ${i}`, drop: 0 }, { text: `VDS ${formatQuantity(rec.vds, 'V')}`, drop: 1 }] : [...region, { text: i, drop: 0 }];
  }
  if (rec.type === 'jfet') {
    const i = formatQuantity(Math.abs(rec.id), 'A');
    const region = regionPart(rec, 'saturation');
    return full ? [...region, { text: `ID ${i}`, drop: 0 }, { text: `VDS ${formatQuantity(rec.vds, 'V')}`, drop: 1 }] : [...region, { text: i, drop: 0 }];
  }
  if (rec.type === 'diode') {
    const i = formatQuantity(rec.id, 'A');
    return full ? [{ text: `ID ${i}`, drop: 0 }, { text: `VD ${formatQuantity(rec.vd, 'V')}`, drop: 1 }] : [{ text: i, drop: 0 }];
  }
  if (el.kind === 'R') {
    const i = formatQuantity(Math.abs(rec.current), 'A');
    return full ? [{ text: `I ${i}`, drop: 0 }, { text: `${formatQuantity(Math.abs(rec.voltage), 'V')} across`, drop: 1 }] : [{ text: i, drop: 0 }];
  }
  if (el.kind === 'V' && full) {
    // A supply delivers power when its current leaves the plus terminal.
    return [{ text: `${rec.power < 0 ? 'delivers' : 'absorbs'} ${formatQuantity(Math.abs(rec.current), 'A')}`, drop: 0 }];
  }
  return undefined;
}

// End-of-line bias labels for device cards: currents, terminal voltages and regions.

import type { Analysis } from '../analysis';
import type { Element } from '../circuit';
import type { DeviceRecord } from '../solve/types';
import type { Span } from '../types';
import { elementsOfCard, instancePrefix } from './document-index';
import { formatQuantity } from '../view/format';
import { dissipation } from '../checks/devices/power';
import { maxOf, minOf } from '../arrays';
import { recordIsOff } from '../checks/devices/context';
import { derivedVoltageLabel } from './structure-words';

/** How much a label shows. */
export type InlayDetail = 'off' | 'terse' | 'full';

/** One label, placed at `offset` (the end of a device card). */
export interface InlayHintData {
  offset: number;
  label: string;
  tooltip?: string;
}

/** Instances listed one by one before the label switches to a range. */
const MAX_LISTED_INSTANCES = 3;

/** Labels for the device cards of `uri` that overlap `span`. */
export function inlayHints(analysis: Analysis, uri: string, span: Span, detail: InlayDetail): InlayHintData[] {
  if (detail === 'off') return [];
  const doc = analysis.documents[uri];
  const op = analysis.operatingPoint;
  if (!doc || !op) return [];
  const out: InlayHintData[] = [];
  // The voltages a structure produces (VBG, a VBE multiplier's voltage) ride on its reference device's label.
  const produced = new Map<string, string>();
  for (const s of analysis.structures) {
    const label = derivedVoltageLabel(s);
    if (label) produced.set(s.reference.device, label);
  }
  const labelOf = (el: Element, d: InlayDetail): string | undefined => {
    const text = labelFor(el, op.devices[el.name], d);
    const extra = produced.get(el.name);
    return text !== undefined && extra ? `${text} · ${extra}` : text;
  };
  const cards = doc.cards;
  // Cards are in document order: skip to the first that can overlap the span.
  let lo = 0;
  let hi = cards.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (cards[mid].span.end < span.start) lo = mid + 1;
    else hi = mid;
  }
  for (let i = lo; i < cards.length; i++) {
    const card = cards[i];
    if (card.span.start > span.end) break;
    if (card.kind !== 'element') continue;
    const elements = elementsOfCard(analysis, uri, card);
    const labelled = elements
      .map((el) => ({ el, text: labelOf(el, detail) }))
      .filter((x): x is { el: Element; text: string } => x.text !== undefined);
    if (labelled.length === 0) continue;
    const offset = labelEnd(doc.text, card);
    if (labelled.length === 1 && !instancePrefix(labelled[0].el)) {
      out.push({ offset, label: labelled[0].text, tooltip: op.converged ? undefined : 'The DC solve did not converge; this is its last iteration.' });
      continue;
    }
    const tooltip = labelled.map((x) => `${x.el.name}: ${labelOf(x.el, 'full')}`).join('\n');
    if (labelled.length <= MAX_LISTED_INSTANCES) {
      out.push({ offset, label: labelled.map((x) => `${instancePrefix(x.el).replace(/\.$/, '')}: ${x.text}`).join(' | '), tooltip });
    } else {
      const currents = labelled.map((x) => mainCurrent(op.devices[x.el.name])).filter((v): v is number => v !== undefined);
      const label = currents.length
        ? `${labelled.length} instances: ${formatQuantity(minOf(currents), 'A')} to ${formatQuantity(maxOf(currents), 'A')}`
        : `${labelled.length} instances`;
      out.push({ offset, label, tooltip });
    }
  }
  return out;
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

function mainCurrent(rec: DeviceRecord | undefined): number | undefined {
  if (!rec) return undefined;
  switch (rec.type) {
    case 'bjt':
      return Math.abs(rec.ic);
    case 'mosfet':
    case 'jfet':
      return Math.abs(rec.id);
    case 'diode':
      return rec.id;
    default:
      return Math.abs(rec.current);
  }
}

function labelFor(el: Element, rec: DeviceRecord | undefined, detail: InlayDetail): string | undefined {
  const label = baseLabel(el, rec, detail);
  if (label === undefined || detail !== 'full' || !(el.kind === 'R' || el.kind === 'D' || el.kind === 'Q' || el.kind === 'M' || el.kind === 'J')) return label;
  const p = dissipation(rec);
  return p === undefined ? label : `${label} · ${formatQuantity(p, 'W')}`;
}

function baseLabel(el: Element, rec: DeviceRecord | undefined, detail: InlayDetail): string | undefined {
  if (!rec) return undefined;
  const full = detail === 'full';
  if (rec.type === 'bjt') {
    const i = formatQuantity(Math.abs(rec.ic), 'A');
    const region = recordIsOff(rec) ? 'off' : rec.region;
    if (full) return `IC ${i} · VCE ${formatQuantity(rec.vce, 'V')} · ${region}`;
    return region === 'forward-active' ? i : `${i} · ${region}`;
  }
  if (rec.type === 'mosfet') {
    const i = formatQuantity(Math.abs(rec.id), 'A');
    const region = recordIsOff(rec) ? 'off' : rec.region;
    if (full) return `ID ${i} · VDS ${formatQuantity(rec.vds, 'V')} · ${region}`;
    return region === 'saturation' ? i : `${i} · ${region}`;
  }
  if (rec.type === 'jfet') {
    const i = formatQuantity(Math.abs(rec.id), 'A');
    const region = recordIsOff(rec) ? 'off' : rec.region;
    if (full) return `ID ${i} · VDS ${formatQuantity(rec.vds, 'V')} · ${region}`;
    return region === 'saturation' ? i : `${i} · ${region}`;
  }
  if (rec.type === 'diode') {
    const i = formatQuantity(rec.id, 'A');
    return full ? `ID ${i} · VD ${formatQuantity(rec.vd, 'V')}` : i;
  }
  if (el.kind === 'R') {
    const i = formatQuantity(Math.abs(rec.current), 'A');
    return full ? `I ${i} · ${formatQuantity(Math.abs(rec.voltage), 'V')} across` : i;
  }
  if (el.kind === 'V' && full) {
    // A supply delivers power when its current leaves the plus terminal.
    return rec.power < 0 ? `delivers ${formatQuantity(Math.abs(rec.current), 'A')}` : `absorbs ${formatQuantity(Math.abs(rec.current), 'A')}`;
  }
  return undefined;
}

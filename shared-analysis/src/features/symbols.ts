// The outline of a netlist: subcircuits with their devices, models, parameters and recognised bias structures.

import { technologyWords } from '../structures/technology';
import type { Analysis } from '../analysis';
import type { Span } from '../types';
import { cardAt, elementByName, subcktScopes } from './document-index';
import { maxOf, minOf } from '../arrays';
import { UNLIMITED, type WorkBudget } from './budget';

/** What an outline entry stands for. */
export type OutlineKind = 'subcircuit' | 'model' | 'parameter' | 'structure' | 'device' | 'include' | 'section' | 'skipped-block' | 'cut-short';

/** The name of the last entry of an outline cut at its budget. */
export const OUTLINE_CUT_NAME = 'Outline cut short';

/** One entry of the outline. `span` covers the whole definition, `selectionSpan` its name. */
export interface OutlineSymbol {
  name: string;
  detail: string;
  kind: OutlineKind;
  span: Span;
  selectionSpan: Span;
  children: OutlineSymbol[];
}

/**
 * The outline of document `uri`: structures first (their devices as children), then subcircuits,
 * models and parameters in text order. One work unit per entry looked at; when `budget` runs out
 * the outline ends with an `Outline cut short` entry saying so, at the end of the document.
 */
export function documentSymbols(analysis: Analysis, uri: string, budget: WorkBudget = UNLIMITED): OutlineSymbol[] {
  const doc = analysis.documents[uri];
  if (!doc) return [];
  const out = outline(analysis, uri, doc, budget);
  if (budget.exhausted) {
    const end = { start: doc.text.length, end: doc.text.length };
    out.push({ name: OUTLINE_CUT_NAME, detail: `only the first ${budget.spent.toLocaleString('en-US')} entries were looked at within the editor's time budget`, kind: 'cut-short', span: end, selectionSpan: end, children: [] });
  }
  return out;
}

function outline(analysis: Analysis, uri: string, doc: Analysis['documents'][string], budget: WorkBudget): OutlineSymbol[] {
  const out: OutlineSymbol[] = [];

  for (const s of analysis.structures) {
    if (!budget.spend(1 + s.devices.length)) break;
    const ref = elementByName(analysis, s.reference.device);
    if (!ref || ref.origin.uri !== uri) continue;
    const children: OutlineSymbol[] = [];
    // A set, not a search of the outputs per device: a mirror can have thousands of outputs.
    const outputs = new Set(s.outputs.map((o) => o.device.toLowerCase()));
    const reference = s.reference.device.toLowerCase();
    for (const d of s.devices) {
      const el = elementByName(analysis, d);
      if (!el || el.origin.uri !== uri) continue;
      const key = d.toLowerCase();
      const role = key === reference ? 'reference' : outputs.has(key) ? 'output' : 'device';
      const card = cardAt(doc, el.origin.span.start);
      const sel = card?.kind === 'element' ? card.name.span : el.origin.span;
      children.push({ name: d, detail: role, kind: 'device', span: el.origin.span, selectionSpan: sel, children: [] });
    }
    const spans = children.map((c) => c.span);
    const span = spans.length ? { start: minOf(spans.map((x) => x.start)), end: maxOf(spans.map((x) => x.end)) } : ref.origin.span;
    const label = s.kind.replace(/-/g, ' ');
    out.push({
      name: `${s.instance}${label} (${s.reference.device})`,
      detail: `${technologyWords(s.technology)}, ${s.outputs.length} output${s.outputs.length === 1 ? '' : 's'}`,
      kind: 'structure',
      span,
      selectionSpan: children[0]?.selectionSpan ?? ref.origin.span,
      children,
    });
  }

  const defs: OutlineSymbol[] = [];
  const scopes = subcktScopes(doc);
  const cards = doc.cards;
  for (const sc of scopes) {
    const children: OutlineSymbol[] = [];
    // Cards are in text order: start at the first card of the body (a binary search), not at the top for every subcircuit.
    let lo = 0;
    let hi = cards.length;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (cards[mid]!.span.start < sc.span.start) lo = mid + 1;
      else hi = mid;
    }
    for (let i = lo; i < cards.length && cards[i]!.span.start <= sc.span.end; i++) {
      const card = cards[i]!;
      if (!budget.spend()) break;
      if (card.kind !== 'element' || card.span.end > sc.span.end) continue;
      children.push({ name: card.name.text, detail: card.letter, kind: 'device', span: card.span, selectionSpan: card.name.span, children: [] });
    }
    defs.push({ name: sc.card.name.text, detail: `ports ${sc.card.ports.map((p) => p.text).join(' ')}`, kind: 'subcircuit', span: sc.span, selectionSpan: sc.card.name.span, children });
  }
  for (const m of analysis.symbols.models) {
    if (!budget.spend()) break;
    if (m.uri !== uri) continue;
    defs.push({ name: m.name, detail: m.kind.toUpperCase(), kind: 'model', span: m.span, selectionSpan: m.nameSpan, children: [] });
  }
  for (const p of analysis.symbols.params) {
    if (!budget.spend()) break;
    if (p.uri !== uri) continue;
    defs.push({ name: p.name, detail: p.expression, kind: 'parameter', span: p.span, selectionSpan: p.nameSpan, children: [] });
  }
  for (const inc of analysis.symbols.includes) {
    if (inc.uri !== uri) continue;
    defs.push({ name: inc.target, detail: inc.found ? 'included file' : 'included file (not found)', kind: 'include', span: inc.span, selectionSpan: inc.span, children: [] });
  }
  for (let i = 0; i < doc.cards.length; i++) {
    if (!budget.spend()) break;
    const card = doc.cards[i]!;
    // A script, control or data block is one entry: nothing inside it is read.
    if (card.kind === 'skipped' && card.group === 'block') {
      defs.push({ name: card.command.text, detail: 'skipped block (not read)', kind: 'skipped-block', span: card.span, selectionSpan: card.command.span, children: [] });
    }
    // A library section (`.lib NAME` … `.endl`), with the models and subcircuits it defines.
    if (card.kind === 'lib' && !card.path && card.section) {
      let end = doc.cards.length - 1;
      for (let j = i + 1; j < doc.cards.length; j++) {
        if (doc.cards[j]!.kind === 'endl') {
          end = j;
          break;
        }
      }
      const children: OutlineSymbol[] = [];
      for (const inner of doc.cards.slice(i + 1, end)) {
        if (inner.kind === 'model') children.push({ name: inner.name.text, detail: inner.type.text.toUpperCase(), kind: 'model', span: inner.span, selectionSpan: inner.name.span, children: [] });
        else if (inner.kind === 'subckt') children.push({ name: inner.name.text, detail: `ports ${inner.ports.map((p) => p.text).join(' ')}`, kind: 'subcircuit', span: inner.span, selectionSpan: inner.name.span, children: [] });
      }
      const span = { start: card.span.start, end: doc.cards[end]!.span.end };
      defs.push({ name: card.section.text, detail: 'library section', kind: 'section', span, selectionSpan: card.section.span, children });
    }
  }
  defs.sort((a, b) => a.span.start - b.span.start);
  // Symbols declared inside a subcircuit body belong under it: under the outermost subcircuit that holds them.
  // The subcircuits still open at a symbol are kept on a stack (text order), so this is one pass, not a search per symbol.
  const top: OutlineSymbol[] = [];
  const open: OutlineSymbol[] = [];
  for (const d of defs) {
    while (open.length > 0 && open[open.length - 1]!.span.end < d.span.start) open.pop();
    const outer = open.find((t) => t.span.start < d.span.start && d.span.end <= t.span.end);
    const parent = d.kind !== 'subcircuit' && d.kind !== 'section' ? outer : undefined;
    if (parent) parent.children.push(d);
    else top.push(d);
    if (d.kind === 'subcircuit') open.push(d);
  }
  for (const t of top) t.children.sort((a, b) => a.span.start - b.span.start);
  return [...out, ...top];
}

// How to write a new resistance into a netlist: over a plain value, into the definition of a parameter only this resistor uses, or over a shared parameter's expression on this card.

import type { Resistor } from '../circuit';
import { parseNumber } from '../elaborate/units';
import type { ParsedDocument, Token } from '../syntax/ast';
import type { Span, TextEdit } from '../types';
import { formatEngineering } from './format';
import { plainSpan } from '../syntax/span-token';

/** A change of one resistor's value, ready to offer: the edits and how the fix title should word it. */
export interface ValueChange {
  edits: TextEdit[];
  /** The number written (`22k`). */
  text: string;
  /**
   * What the title adds so nobody is surprised: `` (RSET = {rset} in .param) ``, `` (replaces {rref}, which R7 also uses) ``,
   * ` in the subcircuit definition (every instance changes)`, or the effective value with `M=`.
   */
  note: string;
}

/** The multiplier between a resistor card's written value and its effective resistance (M=), when the written value is a plain number. */
export function writtenScale(r: Resistor, documents: Record<string, ParsedDocument>): number | undefined {
  const doc = documents[r.origin.uri];
  const span = r.origin.valueSpan;
  if (!doc || !span) return undefined;
  const read = parseNumber(doc.text.slice(span.start, span.end));
  if (!read.ok || !(read.value > 0)) return undefined;
  return read.value / r.resistance;
}

/** A `{name}` or `'name'` value naming one parameter, and that name. */
function parameterOf(text: string): string | undefined {
  const m = /^\s*[{']\s*([A-Za-z_][A-Za-z0-9_]*)\s*[}']\s*$/.exec(text);
  return m ? m[1] : undefined;
}

const identifierIn = (name: string) => new RegExp(`(^|[^A-Za-z0-9_.])${name.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}(?![A-Za-z0-9_])`, 'i');

/**
 * The edits that make resistor `r` `ohms` in effect (its card's `M=` kept):
 * - a plain number is rewritten;
 * - a value `{p}` naming a top-level `.param` that no other field uses gets the new number in
 *   that definition (the parameter stays the design's one place for it);
 * - any other expression (a shared parameter, arithmetic) is replaced on this card by the number,
 *   and the note says what it replaces and who else uses the parameter.
 * Undefined when the card has no value field or `ohms` is not a positive finite number.
 */
export function resistorValueChange(r: Resistor, documents: Record<string, ParsedDocument>, ohms: number): ValueChange | undefined {
  const change = valueChange(r, documents, ohms);
  if (!change) return undefined;
  // A value written against its neighbours (`vee{rset}M=2`) keeps a blank on each side, or `vee24kM=2` would read as one field.
  for (const e of change.edits) {
    const text = documents[e.uri]?.text ?? '';
    const next = text.charAt(e.span.end);
    // A `$` glued before the value (`ref ${rset}`) would start a comment once a blank followed it
    // (`ref $ 24k`): it goes with the value it stood before.
    if (e.span.start > 0 && text.charAt(e.span.start - 1) === '$') e.span = { start: e.span.start - 1, end: e.span.end };
    const before = e.span.start > 0 ? text.charAt(e.span.start - 1) : '';
    if (next !== '' && !/\s/.test(next)) e.newText += ' ';
    if (before !== '' && !/[\s=(]/.test(before)) e.newText = ' ' + e.newText;
  }
  return change;
}

function valueChange(r: Resistor, documents: Record<string, ParsedDocument>, ohms: number): ValueChange | undefined {
  const doc = documents[r.origin.uri];
  const span = r.origin.valueSpan;
  if (!doc || !span || !(ohms > 0) || !Number.isFinite(ohms)) return undefined;
  const written = doc.text.slice(span.start, span.end);
  const scale = writtenScale(r, documents);
  const m = r.m ?? 1;
  const inSubckt = r.origin.instances.length > 0 ? ' in the subcircuit definition (every instance changes)' : '';
  if (scale !== undefined) {
    const text = formatEngineering(ohms * scale, { style: 'netlist', digits: 4 });
    if (text === '') return undefined;
    const effective = Math.abs(scale - 1) > 1e-12 ? ` (${formatEngineering(ohms, { unit: 'Ω' })} effective with M=)` : '';
    return { edits: [{ uri: r.origin.uri, span: plainSpan(span), newText: text }], text, note: effective + inSubckt };
  }
  // An expression: the number to write is the per-part value, M= kept as written.
  const text = formatEngineering(ohms * m, { style: 'netlist', digits: 4 });
  if (text === '') return undefined;
  const param = parameterOf(written);
  if (param) {
    const definition = topLevelParam(documents, param);
    const users = definition ? usesOf(documents, param, definition.name.span) : [];
    if (definition && users.length === 1 && users[0]!.uri === r.origin.uri && users[0]!.span.start === span.start && r.origin.instances.length === 0) {
      return {
        edits: [{ uri: definition.uri, span: plainSpan(definition.value.span), newText: text }],
        text,
        note: ` (in .param ${definition.name.text}, which only ${r.name} uses)`,
      };
    }
    const others = users.length - 1;
    return {
      edits: [{ uri: r.origin.uri, span: plainSpan(span), newText: text }],
      text,
      note: ` (replaces ${written.trim()} on this card; the parameter ${param} is shared${others > 0 ? ` with ${others} other use${others > 1 ? 's' : ''}` : ''} and keeps its value)${inSubckt}`,
    };
  }
  return { edits: [{ uri: r.origin.uri, span: plainSpan(span), newText: text }], text, note: ` (replaces the expression ${written.trim()})${inSubckt}` };
}

/** The top-level `.param` assignment of `name` (the last one, as elaboration keeps), with its document. */
function topLevelParam(documents: Record<string, ParsedDocument>, name: string): { uri: string; name: Token; value: Token } | undefined {
  const want = name.toLowerCase();
  let found: { uri: string; name: Token; value: Token } | undefined;
  for (const doc of Object.values(documents)) {
    let depth = 0;
    for (const card of doc.cards) {
      if (card.kind === 'subckt') depth++;
      else if (card.kind === 'ends') depth = Math.max(0, depth - 1);
      else if (card.kind === 'param' && depth === 0) {
        for (const a of card.params) if (a.name.text.toLowerCase() === want) found = { uri: doc.uri, name: a.name, value: a.value };
      }
    }
  }
  return found;
}

/** Every field of every document that mentions parameter `name`, its definition's name excluded. */
function usesOf(documents: Record<string, ParsedDocument>, name: string, definitionName: Span): { uri: string; span: Span }[] {
  const re = identifierIn(name);
  const out: { uri: string; span: Span }[] = [];
  for (const doc of Object.values(documents)) {
    for (const card of doc.cards) {
      for (const t of card.tokens) {
        if (t.span.start === definitionName.start && t.span.end === definitionName.end) continue;
        if (re.test(t.text)) out.push({ uri: doc.uri, span: t.span });
      }
    }
  }
  return out;
}

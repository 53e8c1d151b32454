// Elaboration after an edit that changed one resistor's number: the last elaboration's circuit with that value and the offsets moved, instead of elaborating every card again.

import type { SymbolTable } from './analysis';
import { elaboratedNamesOf, keepElaboratedNames, type Circuit, type Element, type Model, type Origin } from './circuit';
import type { ElaborationResult } from './elaborate/index';
import { parseNumber } from './elaborate/units';
import { nameTable } from './names';
import type { Card, ElementCard, ParsedDocument } from './syntax/ast';
import type { Finding, Location, Span } from './types';
import { movedSpan, plainSpan } from './syntax/span-token';

/** The text an edit replaced: `[start, oldEnd)` of the old text, which grew by `delta` characters. */
export interface EditRegion {
  start: number;
  oldEnd: number;
  delta: number;
}

/** Values past this magnitude get a finding of their own from the elaborator (`value-out-of-range`). */
const LARGEST_PLAIN_VALUE = 1e15;

/** What an elaboration leaves for the next one to patch: its result besides the circuit and the documents, its findings as the elaborator made them. */
export interface KeptElaboration {
  symbols: SymbolTable;
  /** Copies made before the analysis attached fixes or clamped spans; never handed out (`patchedElaboration` hands out copies). */
  findings: Finding[];
  inactive: Location[];
  /** The elaboration's settings (`elaborationSettings`): a patch applies only under the same ones. */
  settings: string;
}

/** The settings an elaboration depends on besides the text. */
export function elaborationSettings(options: { temperatureC?: number; maxElements?: number; includeFolders?: readonly string[] }): string {
  return JSON.stringify([options.temperatureC ?? null, options.maxElements ?? null, options.includeFolders ?? null]);
}

/** The parts of `elab` a later patch starts from; call it before the analysis writes into the findings. */
export function keptElaboration(elab: ElaborationResult, settings: string): KeptElaboration {
  return { symbols: elab.symbols, findings: elab.findings.map(copyFinding), inactive: elab.inactive, settings };
}

/** The elaboration of an edited text made from the last one, and the index of the element whose value changed. */
export interface PatchedElaboration {
  result: ElaborationResult;
  kept: KeptElaboration;
  changed: number[];
}

/**
 * The elaboration of `document` (the parse of the edited text, whose card `card` alone was read again after the edit
 * `region`) made from the last elaboration (`circuit`, `kept`) of `before`, when the edit changed only the number of
 * one resistor elaborated once, at the top level: a plain number on both sides (a number is read the same in every
 * scope), positive and within range (no finding on either), every other token of the card the same. Everything else
 * is the last elaboration's with the offsets after the edit moved. Undefined for any other edit, for a netlist that
 * reads other files (their text may have changed) or has a behavioural source, and when something to move lies across
 * the edit; the whole text
 * must then be elaborated. `test/unit/solve/incremental-elaborate.test.ts` compares the two on random edits.
 */
export function patchedElaboration(
  last: { circuit: Circuit; document: ParsedDocument; kept: KeptElaboration },
  document: ParsedDocument,
  edit: { card: number; region: EditRegion },
  settings: string,
): PatchedElaboration | undefined {
  const { circuit, kept } = last;
  if (kept.settings !== settings || kept.symbols.includes.length > 0) return undefined;
  const before = last.document.cards[edit.card];
  const after = document.cards[edit.card];
  if (!before || !after || !sameButValue(before, after)) return undefined;
  const oldValue = plainValue(before as ElementCard);
  const newValue = plainValue(after as ElementCard);
  if (oldValue === undefined || newValue === undefined) return undefined;
  // A behavioural source's program holds offsets and the solver's scratch values: such a circuit is elaborated afresh.
  if (circuit.elements.some((x) => !MOVABLE_KINDS.has(x.kind))) return undefined;
  const e = soleTopLevelElement(circuit, document.uri, before.span);
  const el = e === undefined ? undefined : circuit.elements[e];
  if (!el || el.kind !== 'R' || !Object.is(el.resistance, oldValue / (el.m ?? 1))) return undefined;
  const mover = new OffsetMover(edit.region);
  // An edit that kept the length moves nothing: every other element and model is another card's, and stays as it is.
  const models = edit.region.delta === 0 ? { table: circuit.models, moved: new Map<Model, Model>() } : mover.models(circuit.models);
  if (!models) return undefined;
  const elements = edit.region.delta === 0 ? circuit.elements.slice() : mover.elements(circuit.elements, models.moved, e!);
  const findings = mover.findings(kept.findings);
  const symbols = mover.symbols(kept.symbols);
  const inactive = mover.locations(kept.inactive);
  if (!elements || !findings || !symbols || !inactive) return undefined;
  const card = after as ElementCard;
  const origin: Origin = { ...el.origin, span: card.span, nodeSpans: card.nodes.map((t) => t.span), valueSpan: card.value!.span };
  if (card.model) origin.modelSpan = card.model.span;
  const resistance = newValue / (el.m ?? 1);
  elements[e!] = { ...el, resistance, origin };
  const patched: Circuit = { ...circuit, elements, models: models.table };
  // The same names in the same places: the elaborator's name tables serve the patched circuit too.
  keepElaboratedNames(patched, elaboratedNamesOf(circuit));
  return {
    result: { circuit: patched, documents: nameTable({ [document.uri]: document }), symbols, findings: findings.map(copyFinding), inactive },
    kept: { symbols, findings, inactive, settings },
    changed: Object.is(resistance, el.resistance) ? [] : [e!],
  };
}

/** Whether two resistor cards have the same tokens (text and kind) but for their value field, a plain word on both. */
function sameButValue(a: Card, b: Card): boolean {
  if (a.kind !== 'element' || b.kind !== 'element' || a.letter !== 'R' || b.letter !== 'R' || !a.value || !b.value) return false;
  if (a.value.kind !== 'word' || b.value.kind !== 'word' || a.tokens.length !== b.tokens.length || a.comments || b.comments) return false;
  for (let i = 0; i < a.tokens.length; i++) {
    const s = a.tokens[i]!;
    const t = b.tokens[i]!;
    if (s === a.value) {
      if (t !== b.value) return false;
    } else if (s.text !== t.text || s.kind !== t.kind || t === b.value) return false;
  }
  return true;
}

/** A resistor card's value when it is a number (never a parameter's name) that elaboration takes without a finding. */
function plainValue(card: ElementCard): number | undefined {
  const n = parseNumber(card.value!.text);
  return n.ok && n.value > 0 && n.value <= LARGEST_PLAIN_VALUE ? n.value : undefined;
}

/** The index of the one element made from the card at `span` of the root document at the top level, or undefined when there is not exactly one, or one made inside a subcircuit instance. */
function soleTopLevelElement(circuit: Circuit, uri: string, span: Span): number | undefined {
  let found: number | undefined;
  const elements = circuit.elements;
  for (let i = 0; i < elements.length; i++) {
    const o = elements[i]!.origin;
    if (o.span.start !== span.start || o.span.end !== span.end || o.uri !== uri) continue;
    if (found !== undefined || o.instances.length > 0) return undefined;
    found = i;
  }
  return found;
}

/** Element kinds whose elaborated form holds offsets only in `origin` and nothing a solve writes into. */
const MOVABLE_KINDS = new Set<Element['kind']>(['R', 'C', 'L', 'V', 'I', 'E', 'G', 'F', 'H', 'D', 'Q', 'M', 'J', 'S', 'W', 'T']);

/** Moves the offsets of the old text past an edit: a span before it is kept (the same object), one after it moved, one across it has no place (undefined). */
class OffsetMover {
  /** Instance chains are shared by the elements of one instance: moved once each. */
  private readonly chains = new Map<Origin['instances'], Origin['instances'] | undefined>();

  constructor(private readonly r: EditRegion) {}

  span(s: Span): Span | undefined {
    if (s.end <= this.r.start) return s;
    if (s.start >= this.r.oldEnd) return this.r.delta === 0 ? s : movedSpan(s, this.r.delta);
    return undefined;
  }

  /** An origin with its spans moved (the same object when none moves), or undefined. */
  origin(o: Origin): Origin | undefined {
    if (o.instances.length === 0 && o.nodeSpans) {
      // An element at the top level: every span of it lies in its card, before or after the edit (a card the edit lies in has no place).
      if (o.span.end <= this.r.start || this.r.delta === 0) return this.within(o.span) ? o : undefined;
      return o.span.start >= this.r.oldEnd ? shiftedOrigin(o, this.r.delta) : undefined;
    }
    const span = this.span(o.span);
    const instances = this.instances(o.instances);
    const nodeSpans = o.nodeSpans ? this.spans(o.nodeSpans) : undefined;
    const valueSpan = o.valueSpan ? this.span(o.valueSpan) : undefined;
    const modelSpan = o.modelSpan ? this.span(o.modelSpan) : undefined;
    if (!span || !instances || (o.nodeSpans && !nodeSpans) || (o.valueSpan && !valueSpan) || (o.modelSpan && !modelSpan)) return undefined;
    if (span === o.span && instances === o.instances && nodeSpans === o.nodeSpans && valueSpan === o.valueSpan && modelSpan === o.modelSpan) return o;
    const moved: Origin = { ...o, span, instances };
    if (nodeSpans) moved.nodeSpans = nodeSpans;
    if (valueSpan) moved.valueSpan = valueSpan;
    if (modelSpan) moved.modelSpan = modelSpan;
    return moved;
  }

  /** The circuit's models with moved origins, and which were copied; undefined when one cannot be moved. */
  models(table: Record<string, Model>): { table: Record<string, Model>; moved: Map<Model, Model> } | undefined {
    const moved = new Map<Model, Model>();
    const out: Record<string, Model> = nameTable();
    for (const key of Object.keys(table)) {
      const m = table[key]!;
      let copy = moved.get(m);
      if (!copy) {
        const origin = this.origin(m.origin);
        if (!origin) return undefined;
        copy = origin === m.origin ? m : { ...m, origin };
        if (copy !== m) moved.set(m, copy);
      }
      out[key] = copy;
    }
    return { table: out, moved };
  }

  /** The elements with moved origins and their models the moved ones (the same objects where nothing moves), element `edited` as it is; undefined when one cannot be moved. */
  elements(list: readonly Element[], models: Map<Model, Model>, edited: number): Element[] | undefined {
    const out: Element[] = new Array(list.length);
    for (let i = 0; i < list.length; i++) {
      const el = list[i]!;
      if (i === edited) {
        out[i] = el;
        continue;
      }
      const origin = this.origin(el.origin);
      const model = 'model' in el ? models.get(el.model) : undefined;
      if (!origin) return undefined;
      if (origin === el.origin && !model) {
        out[i] = el;
        continue;
      }
      out[i] = model ? ({ ...el, origin, model } as Element) : { ...el, origin };
    }
    return out;
  }

  /** Findings with their places moved (new objects), or undefined when one lies across the edit. */
  findings(list: readonly Finding[]): Finding[] | undefined {
    const out: Finding[] = [];
    for (const f of list) {
      const span = this.span(f.span);
      const related = f.related ? this.locations(f.related) : undefined;
      if (!span || (f.related && !related)) return undefined;
      const moved: Finding = { ...f, span: plainSpan(span) };
      if (related) moved.related = related;
      out.push(moved);
    }
    return out;
  }

  /** Locations (or related locations) with their spans moved, as new objects; undefined when one lies across the edit. */
  locations<T extends Location>(list: readonly T[]): T[] | undefined {
    const out: T[] = [];
    for (const l of list) {
      const span = this.span(l.span);
      if (!span) return undefined;
      out.push({ ...l, span: plainSpan(span) });
    }
    return out;
  }

  /** The symbol table with every definition's spans moved; undefined when one lies across the edit. */
  symbols(s: SymbolTable): SymbolTable | undefined {
    const params = this.definitions(s.params);
    const models = this.definitions(s.models);
    const subckts = this.definitions(s.subckts);
    if (!params || !models || !subckts) return undefined;
    return { params, models, subckts, includes: s.includes };
  }

  private definitions<T extends { span: Span; nameSpan: Span }>(list: readonly T[]): T[] | undefined {
    const out: T[] = [];
    for (const d of list) {
      const span = this.span(d.span);
      const nameSpan = this.span(d.nameSpan);
      if (!span || !nameSpan) return undefined;
      out.push(span === d.span && nameSpan === d.nameSpan ? d : { ...d, span, nameSpan });
    }
    return out;
  }

  private within(s: Span): boolean {
    return s.end <= this.r.start || s.start >= this.r.oldEnd;
  }

  private spans(list: readonly Span[]): readonly Span[] | undefined {
    let out: Span[] | undefined;
    for (let i = 0; i < list.length; i++) {
      const s = this.span(list[i]!);
      if (!s) return undefined;
      if (s !== list[i] && !out) out = list.slice(0, i);
      out?.push(s);
    }
    return out ?? list;
  }

  private instances(chain: Origin['instances']): Origin['instances'] | undefined {
    if (chain.length === 0) return chain;
    if (this.chains.has(chain)) return this.chains.get(chain);
    let moved: Origin['instances'] | undefined = [];
    for (const x of chain) {
      const span = this.span(x.span);
      if (!span) {
        moved = undefined;
        break;
      }
      moved.push(span === x.span ? x : { ...x, span });
    }
    if (moved && moved.every((x, i) => x === chain[i])) moved = chain;
    this.chains.set(chain, moved);
    return moved;
  }
}

/** An element's origin (fields in the elaborator's order) with every span moved `delta` characters: written out field by field, as it runs for every element after an edit that changed the text's length. */
function shiftedOrigin(o: Origin, delta: number): Origin {
  const nodeSpans = o.nodeSpans!;
  const moved: Span[] = new Array(nodeSpans.length);
  for (let i = 0; i < nodeSpans.length; i++) moved[i] = shifted(nodeSpans[i]!, delta);
  const out: Origin = { uri: o.uri, span: shifted(o.span, delta), nodeSpans: moved, instances: o.instances };
  if (o.valueSpan) out.valueSpan = shifted(o.valueSpan, delta);
  if (o.modelSpan) out.modelSpan = shifted(o.modelSpan, delta);
  return out;
}

/** A span moved: a token that is its own span (the parser's) as a moved token, as a cold elaboration of the moved text holds one. */
function shifted(s: Span, delta: number): Span {
  return movedSpan(s, delta);
}

/** A finding as a new object down to its spans (`data` shared: nothing writes into it). */
function copyFinding(f: Finding): Finding {
  const copy: Finding = { ...f, span: plainSpan(f.span) };
  if (f.related) copy.related = f.related.map((x) => ({ ...x, span: plainSpan(x.span) }));
  return copy;
}

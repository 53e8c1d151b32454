// Context-aware completions: element letters, dot cards, model names and types, model and instance parameters, nodes and parameters.

import type { Analysis } from '../analysis';
import type { ModelKind } from '../circuit';
import type { ParsedDocument } from '../syntax/ast';
import type { Span } from '../types';
import { cardAt, scopeAt, type SubcktScope } from './document-index';
import { DOT_CARDS, ELEMENT_LETTERS, INSTANCE_PARAMETERS, MODEL_PARAMETERS, defaultOf, modelKindOf, modelKindsFor } from './vocabulary';
import { formatNumber } from '../view/format';
import { formatNumber as modelNumber } from '../fixes/model-fixes';
import { UNLIMITED, type WorkBudget } from './budget';

/** What a completion item stands for. */
export type CompletionKind = 'element' | 'dot-card' | 'model' | 'model-type' | 'model-parameter' | 'instance-parameter' | 'subcircuit' | 'node' | 'parameter';

/** One completion: the text to insert replaces `replace` (the partial word before the cursor). */
export interface CompletionData {
  label: string;
  kind: CompletionKind;
  detail: string;
  documentation?: string;
  /** Plain text to insert (default: the label); for a template, the template with its placeholders' defaults. */
  insertText?: string;
  /** The same template in LSP snippet syntax (`${1:collector}`), for a client that takes snippets. */
  snippet?: string;
  /** Where the item sorts among the others: the order they are offered in (most likely first). */
  sortText?: string;
  replace: Span;
}

/** Completions at `offset` of `uri`, chosen by the card and field the cursor is in, most likely first. */
export function completionsAt(analysis: Analysis, uri: string, offset: number): CompletionData[] {
  return completionListAt(analysis, uri, offset).items;
}

/** Items a completion answer carries at most; past it only the items that begin with the word typed are kept, up to this many. */
export const MAX_COMPLETION_ITEMS = 1000;

/** The budget of the completion in progress (one work unit per card read for node and source names). */
let spending: WorkBudget = UNLIMITED;

/**
 * `completionsAt` with a work budget and a bound on the answer's size. `incomplete` when the list
 * is not every candidate (the budget ran out while names were gathered, or there were more than
 * MAX_COMPLETION_ITEMS): the editor then asks again as the word grows, and the list narrows to it.
 */
export function completionListAt(analysis: Analysis, uri: string, offset: number, budget: WorkBudget = UNLIMITED): { items: CompletionData[]; incomplete: boolean } {
  spending = budget;
  let items: CompletionData[];
  try {
    items = offered(analysis, uri, offset);
  } finally {
    spending = UNLIMITED;
  }
  let incomplete = budget.exhausted;
  if (items.length > MAX_COMPLETION_ITEMS) {
    incomplete = true;
    const first = items[0]!.replace;
    const word = (analysis.documents[uri]?.text.slice(first.start, first.end) ?? '').toLowerCase();
    items = items.filter((item) => item.label.toLowerCase().startsWith(word)).slice(0, MAX_COMPLETION_ITEMS);
  }
  items.forEach((item, i) => (item.sortText = String(i).padStart(4, '0')));
  return { items, incomplete };
}

function offered(analysis: Analysis, uri: string, offset: number): CompletionData[] {
  const doc = analysis.documents[uri];
  if (!doc || !Number.isFinite(offset) || offset < 0 || offset > doc.text.length) return [];
  const text = doc.text;
  const lineStart = Math.max(text.lastIndexOf('\n', offset - 1), text.lastIndexOf('\r', offset - 1)) + 1;
  let before = text.slice(lineStart, offset);
  // The word being typed, and the fields of the card before it. A continuation line's `+` marks the
  // line, it is not part of a word: `+` alone at the cursor is an empty word after the card's fields.
  const wordMatch = /[^\s,()=]*$/.exec(before.replace(/^(\s*)\+/, '$1 '));
  const word = wordMatch ? wordMatch[0] : '';
  const replace = { start: offset - word.length, end: offset };
  const scope = scopeAt(doc, offset);

  // Inside an unclosed { … } or '…': parameter names.
  const braceOpen = before.lastIndexOf('{');
  if (braceOpen >= 0 && before.indexOf('}', braceOpen) < 0) {
    const ident = /[A-Za-z_][A-Za-z0-9_]*$/.exec(before)?.[0] ?? '';
    return paramItems(analysis, scope, { start: offset - ident.length, end: offset });
  }
  if (/^\s*\*/.test(before)) return [];
  for (const marker of [';', '$ ']) if (before.includes(marker)) return [];

  // A `+` line continues the card that started earlier: take that card's first line.
  let head = before;
  if (/^\s*\+/.test(before)) {
    const card = cardAt(doc, lineStart) ?? cardAt(doc, Math.max(0, lineStart - 1));
    if (card) head = text.slice(card.span.start, offset).replace(/\r?\n\s*\+/g, ' ');
    else return [];
  }
  const fields = head.trim().length ? head.trim().split(/[\s,()]+/).filter((f) => f.length) : [];
  const typingFirst = fields.length === 0 || (fields.length === 1 && word.length > 0 && !/\s$/.test(head));
  if (typingFirst) {
    if (isTitleLine(doc, lineStart)) return [];
    if (word.startsWith('.')) return [...modelTemplateItems(analysis, replace), ...dotItems(replace)];
    return word.length <= 1 ? [...letterItems(analysis, uri, doc, scope, replace, word), ...dotItems(replace)] : [];
  }
  const done = word.length ? fields.slice(0, -1) : fields;
  const first = done[0];
  const position = done.length; // index of the field being typed
  if (word.includes('=')) return [];

  if (first.startsWith('.')) {
    const command = first.toLowerCase();
    if (command === '.model') {
      if (position === 2) return modelTypeItems(replace);
      if (position >= 3) {
        const kind = modelKindOf(done[2] ?? '');
        return kind ? modelParamItems(kind, replace) : [];
      }
    }
    return [];
  }
  const letter = first[0].toUpperCase();
  const info = ELEMENT_LETTERS.find((l) => l.letter === letter);
  if (!info) return [];
  const nodeCount: Record<string, number> = { R: 2, C: 2, L: 2, V: 2, I: 2, E: 4, G: 4, F: 2, H: 2, D: 2, Q: 3, M: 4, J: 3, S: 4, W: 2 };
  if (letter === 'X') {
    return position >= 2 ? [...subcktItems(analysis, replace), ...nodeItems(analysis, doc, scope, replace)] : nodeItems(analysis, doc, scope, replace);
  }
  const n = nodeCount[letter];
  if (position <= n) return nodeItems(analysis, doc, scope, replace);
  const kinds = modelKindsFor(letter);
  if (letter === 'Q' && position >= 4) {
    // The model comes first: after an optional substrate node (position 4), and before the area and M=.
    const models = modelItems(analysis, uri, scope, kinds, replace);
    const known = new Set(models.map((m) => m.label.toLowerCase()));
    if (done.slice(4).some((f) => known.has(f.toLowerCase()))) return instanceParamItems(letter, replace);
    return [...models, ...(position === 4 ? nodeItems(analysis, doc, scope, replace) : []), ...instanceParamItems(letter, replace)];
  }
  if (letter === 'M' && position === 5) return modelItems(analysis, uri, scope, kinds, replace);
  if ((letter === 'M' && position > 5) || ((letter === 'D' || letter === 'R') && position > n + 1)) return instanceParamItems(letter, replace);
  if ((letter === 'D' || letter === 'J' || letter === 'S') && position === n + 1) return modelItems(analysis, uri, scope, kinds, replace);
  if (letter === 'W' && position === 3) return sourceItems(analysis, replace);
  if (letter === 'W' && position === 4) return modelItems(analysis, uri, scope, kinds, replace);
  if ((letter === 'F' || letter === 'H') && position === 3) return sourceItems(analysis, replace);
  return [];
}

function isTitleLine(doc: ParsedDocument, lineStart: number): boolean {
  const first = doc.cards[0];
  return lineStart === 0 && first?.kind === 'title';
}

/** A template field: literal text, or a placeholder with its default (after a literal prefix such as `W=`). */
type Field = string | { default: string; prefix?: string };

/** What an element card of each letter is made of after its name: nodes, then model or value (the family's field order). */
function elementFields(letter: string, model: (kinds: ModelKind[]) => string, source: string): Field[] | undefined {
  const p = (d: string, prefix?: string): Field => ({ default: d, prefix });
  switch (letter) {
    case 'R':
      return [p('node1'), p('node2'), p('1k')];
    case 'C':
      return [p('node1'), p('node2'), p('1u')];
    case 'L':
      return [p('node1'), p('node2'), p('1m')];
    case 'V':
      return [p('plus'), p('0'), 'DC', p('5')];
    case 'I':
      return [p('plus'), p('minus'), 'DC', p('1m')];
    case 'E':
      return [p('outp'), p('outn'), p('ctrlp'), p('ctrln'), p('1')];
    case 'G':
      return [p('outp'), p('outn'), p('ctrlp'), p('ctrln'), p('1m')];
    case 'F':
      return [p('outp'), p('outn'), p(source), p('1')];
    case 'H':
      return [p('outp'), p('outn'), p(source), p('1k')];
    case 'D':
      return [p('anode'), p('cathode'), p(model(['d']))];
    case 'Q':
      return [p('collector'), p('base'), p('emitter'), p(model(['npn', 'pnp']))];
    case 'J':
      return [p('drain'), p('gate'), p('source'), p(model(['njf', 'pjf']))];
    case 'S':
      return [p('node1'), p('node2'), p('ctrlp'), p('ctrln'), p(model(['sw']))];
    case 'W':
      return [p('node1'), p('node2'), p(source), p(model(['csw']))];
    case 'M':
      return [p('drain'), p('gate'), p('source'), p('bulk'), p(model(['nmos', 'pmos'])), p('10u', 'W='), p('1u', 'L=')];
    case 'X':
      return [p('nodes'), p('subckt')];
    default:
      return undefined;
  }
}

/** Escapes text for a snippet (`$`, `}` and `\` are special there). */
function snippetText(t: string): string {
  return t.replace(/[\\$}]/g, (c) => `\\${c}`);
}

/** A template as plain text (the defaults) and as a snippet (numbered placeholders): the head, then the fields separated by spaces, then the tail. */
function template(head: string, fields: Field[], tail = ''): { plain: string; snippet: string } {
  let plain = head;
  let snippet = snippetText(head);
  let k = 0;
  for (const f of fields) {
    if (typeof f === 'string') {
      plain += ` ${f}`;
      snippet += ` ${snippetText(f)}`;
    } else {
      const prefix = f.prefix ?? '';
      plain += ` ${prefix}${f.default}`;
      snippet += ` ${snippetText(prefix)}\${${++k}:${snippetText(f.default)}}`;
    }
  }
  return { plain: plain + tail, snippet: snippet + snippetText(tail) };
}

/** The first free name of a letter in this document: R1, R2, … (case-insensitive, as the family compares names). */
function nextName(doc: ParsedDocument, letter: string): string {
  const used = new Set<string>();
  for (const c of doc.cards) if (c.kind === 'element') used.add(c.name.text.toUpperCase());
  let n = 1;
  while (used.has(`${letter}${n}`) && n < 100000) n++;
  return `${letter}${n}`;
}

/** Element templates for the letters that match what is typed: name, then placeholders for nodes, model and value. */
function letterItems(analysis: Analysis, uri: string, doc: ParsedDocument, scope: SubcktScope | undefined, replace: Span, typed: string): CompletionData[] {
  const model = (kinds: ModelKind[]) => modelItems(analysis, uri, scope, kinds, replace)[0]?.label ?? 'model';
  const source = sourceItems(analysis, replace)[0]?.label ?? 'Vsense';
  const out: CompletionData[] = [];
  for (const l of ELEMENT_LETTERS) {
    if (typed && l.letter !== typed.toUpperCase()) continue;
    const name = nextName(doc, l.letter);
    const fields = elementFields(l.letter, model, source);
    const t = fields ? template(name, fields) : undefined;
    out.push({ label: l.letter, kind: 'element', detail: l.title, documentation: `${l.fields}\n\n${l.note}`, insertText: t?.plain, snippet: t?.snippet, replace });
    if (l.letter === 'X') {
      // One template per subcircuit, its ports as the node placeholders.
      for (const sub of analysis.symbols.subckts) {
        const x = template(name, [...sub.ports.map((port) => ({ default: port })), sub.name]);
        out.push({ label: `X ${sub.name}`, kind: 'subcircuit', detail: `instance of ${sub.name}`, documentation: `Ports ${sub.ports.join(' ')}`, insertText: x.plain, snippet: x.snippet, replace });
      }
    }
  }
  return out;
}

/** The model types a `.model` template is offered for, with a default name stem. */
const MODEL_TEMPLATES: { word: string; kind: Exclude<ModelKind, 'r'>; stem: string; title: string }[] = [
  { word: 'NPN', kind: 'npn', stem: 'QN', title: 'NPN bipolar transistor model' },
  { word: 'PNP', kind: 'pnp', stem: 'QP', title: 'PNP bipolar transistor model' },
  { word: 'D', kind: 'd', stem: 'DX', title: 'diode model' },
  { word: 'NMOS', kind: 'nmos', stem: 'NM', title: 'n-channel MOS transistor model' },
  { word: 'PMOS', kind: 'pmos', stem: 'PM', title: 'p-channel MOS transistor model' },
  { word: 'NJF', kind: 'njf', stem: 'JN', title: 'n-channel junction FET model' },
  { word: 'PJF', kind: 'pjf', stem: 'JP', title: 'p-channel junction FET model' },
  { word: 'SW', kind: 'sw', stem: 'SWV', title: 'voltage-controlled switch model' },
  { word: 'CSW', kind: 'csw', stem: 'SWI', title: 'current-controlled switch model' },
];

/**
 * `.model` templates, one per device type: a free name, the type, and the parameters of record
 * (those a reader expects on the card) with the engine's defaults as placeholders. Parameters whose
 * default is unbounded (VAF) cannot be written as a number and are named in a trailing comment.
 */
function modelTemplateItems(analysis: Analysis, replace: Span): CompletionData[] {
  const taken = new Set(analysis.symbols.models.map((m) => m.name.toLowerCase()));
  return MODEL_TEMPLATES.map(({ word, kind, stem, title }) => {
    let n = 1;
    while (taken.has(`${stem}${n}`.toLowerCase()) && n < 100000) n++;
    const params: Field[] = [];
    const unbounded: string[] = [];
    for (const p of MODEL_PARAMETERS[kind]) {
      if (!p.core || p.default === undefined) continue;
      if (Number.isFinite(p.default)) params.push({ default: modelNumber(p.default), prefix: `${params.length ? '' : '('}${p.name}=` });
      else unbounded.push(p.name);
    }
    const note = unbounded.length ? ` ; ${unbounded.join(', ')} not given: ${unbounded.includes('VAF') ? 'no Early effect' : 'unbounded'}` : '';
    const t = template(`.model ${stem}${n} ${word}`, params, `)${note}`);
    return { label: `.model ${word}`, kind: 'dot-card' as const, detail: title, documentation: `${t.plain}\n\nThe engine's default of each parameter (docs/DEVICE-MODELS.md).`, insertText: t.plain, snippet: t.snippet, replace };
  });
}

function dotItems(replace: Span): CompletionData[] {
  return DOT_CARDS.map((d) => ({ label: d.name, kind: 'dot-card', detail: d.description, documentation: d.form, replace }));
}

function modelTypeItems(replace: Span): CompletionData[] {
  const types: [string, string][] = [
    ['NPN', 'NPN bipolar transistor'],
    ['PNP', 'PNP bipolar transistor'],
    ['D', 'diode'],
    ['NMOS', 'n-channel MOS transistor (square law)'],
    ['PMOS', 'p-channel MOS transistor (square law)'],
    ['NJF', 'n-channel junction FET'],
    ['PJF', 'p-channel junction FET'],
    ['SW', 'voltage-controlled switch'],
    ['CSW', 'current-controlled switch'],
    ['R', 'resistor model (sheet resistance RSH, temperature coefficients TC1, TC2)'],
  ];
  return types.map(([label, detail]) => ({ label, kind: 'model-type', detail, replace }));
}

function modelParamItems(kind: ModelKind, replace: Span): CompletionData[] {
  return MODEL_PARAMETERS[kind].map((p) => {
    const def = defaultOf(kind, p.name);
    return {
      label: p.name,
      kind: 'model-parameter',
      detail: `${p.meaning}${p.unit ? ` (${p.unit})` : ''}`,
      documentation: def === undefined ? undefined : `Default ${Number.isFinite(def) ? formatNumber(def) : '∞ (none)'}.`,
      insertText: `${p.name}=`,
      replace,
    };
  });
}

function instanceParamItems(letter: string, replace: Span): CompletionData[] {
  return (INSTANCE_PARAMETERS[letter] ?? []).map((p) => ({
    label: p.name,
    kind: 'instance-parameter',
    detail: `${p.meaning}${p.unit ? ` (${p.unit})` : ''}`,
    insertText: `${p.name}=`,
    replace,
  }));
}

function modelItems(analysis: Analysis, uri: string, scope: SubcktScope | undefined, kinds: ModelKind[], replace: Span): CompletionData[] {
  const seen = new Set<string>();
  const out: CompletionData[] = [];
  for (const m of analysis.symbols.models) {
    const kind = modelKindOf(m.kind);
    if (!kind || !kinds.includes(kind)) continue;
    // A model declared inside another subcircuit body is not in scope here.
    const doc = analysis.documents[m.uri];
    const home = doc ? scopeAt(doc, m.span.start) : undefined;
    if (home && !(scope && m.uri === uri && home.span.start === scope.span.start)) continue;
    const key = m.name.toLowerCase();
    if (seen.has(key)) continue;
    seen.add(key);
    out.push({ label: m.name, kind: 'model', detail: `${m.kind.toUpperCase()} model`, replace });
  }
  return out;
}

function subcktItems(analysis: Analysis, replace: Span): CompletionData[] {
  return analysis.symbols.subckts.map((s) => ({ label: s.name, kind: 'subcircuit', detail: `subcircuit, ports ${s.ports.join(' ')}`, replace }));
}

function sourceItems(analysis: Analysis, replace: Span): CompletionData[] {
  const names = new Set<string>();
  for (const doc of Object.values(analysis.documents)) {
    for (const c of doc.cards) {
      if (!spending.spend()) break;
      if (c.kind === 'element' && c.letter === 'V') names.add(c.name.text);
    }
  }
  return [...names].map((n) => ({ label: n, kind: 'element', detail: 'voltage source whose current controls this element', replace }));
}

function nodeItems(analysis: Analysis, doc: ParsedDocument, scope: SubcktScope | undefined, replace: Span): CompletionData[] {
  const names = new Map<string, string>();
  const docs = scope ? [doc] : Object.values(analysis.documents);
  for (const d of docs) {
    for (const c of d.cards) {
      if (!spending.spend()) break;
      const home = scopeAt(d, c.span.start);
      if (scope ? d !== doc || home !== scope : home !== undefined) continue;
      const toks = c.kind === 'element' ? c.nodes : c.kind === 'subckt' && scope && c === scope.card ? c.ports : [];
      for (const t of toks) {
        if (t.span.start <= replace.end && t.span.end >= replace.start) continue;
        if (!names.has(t.text.toLowerCase())) names.set(t.text.toLowerCase(), t.text);
      }
    }
  }
  return [...names.values()].map((n) => ({ label: n, kind: 'node', detail: n === '0' ? 'ground' : 'node', replace }));
}

function paramItems(analysis: Analysis, scope: SubcktScope | undefined, replace: Span): CompletionData[] {
  return analysis.symbols.params
    .filter((p) => p.scope === '' || (scope && p.scope === scope.name))
    .map((p) => ({
      label: p.name,
      kind: 'parameter',
      detail: p.value !== undefined ? `= ${formatNumber(p.value, 6)}` : `= ${p.expression}`,
      documentation: p.scope ? `Parameter of subcircuit ${p.scope}.` : 'Top-level parameter.',
      replace,
    }));
}

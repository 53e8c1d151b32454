// Context-aware completions: element letters, dot cards, model names and types, model and instance parameters, nodes and parameters.

import type { Analysis } from '../analysis';
import type { ModelKind } from '../circuit';
import type { ParsedDocument } from '../syntax/ast';
import type { Span } from '../types';
import { cardAt, scopeAt, type SubcktScope } from './document-index';
import { DOT_CARDS, ELEMENT_LETTERS, INSTANCE_PARAMETERS, MODEL_PARAMETERS, defaultOf, modelKindOf, modelKindsFor } from './vocabulary';
import { formatNumber } from './quantity';

/** What a completion item stands for. */
export type CompletionKind = 'element' | 'dot-card' | 'model' | 'model-type' | 'model-parameter' | 'instance-parameter' | 'subcircuit' | 'node' | 'parameter';

/** One completion: the text to insert replaces `replace` (the partial word before the cursor). */
export interface CompletionData {
  label: string;
  kind: CompletionKind;
  detail: string;
  documentation?: string;
  insertText?: string;
  replace: Span;
}

/** Completions at `offset` of `uri`, chosen by the card and field the cursor is in. */
export function completionsAt(analysis: Analysis, uri: string, offset: number): CompletionData[] {
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
    if (word.startsWith('.')) return dotItems(replace);
    return word.length <= 1 ? [...letterItems(replace, word), ...dotItems(replace)] : [];
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
  const nodeCount: Record<string, number> = { R: 2, C: 2, L: 2, V: 2, I: 2, E: 4, G: 4, F: 2, H: 2, D: 2, Q: 3, M: 4 };
  if (letter === 'X') {
    return position >= 2 ? [...subcktItems(analysis, replace), ...nodeItems(analysis, doc, scope, replace)] : nodeItems(analysis, doc, scope, replace);
  }
  const n = nodeCount[letter];
  if (position <= n) return nodeItems(analysis, doc, scope, replace);
  const kinds = modelKindsFor(letter);
  if (letter === 'Q' && position >= 4) return [...modelItems(analysis, uri, scope, kinds, replace), ...instanceParamItems(letter, replace)];
  if (letter === 'M' && position === 5) return modelItems(analysis, uri, scope, kinds, replace);
  if ((letter === 'M' && position > 5) || ((letter === 'D' || letter === 'R') && position > n + 1)) return instanceParamItems(letter, replace);
  if (letter === 'D' && position === n + 1) return modelItems(analysis, uri, scope, kinds, replace);
  if ((letter === 'F' || letter === 'H') && position === 3) return sourceItems(analysis, replace);
  return [];
}

function isTitleLine(doc: ParsedDocument, lineStart: number): boolean {
  const first = doc.cards[0];
  return lineStart === 0 && first?.kind === 'title';
}

function letterItems(replace: Span, typed: string): CompletionData[] {
  return ELEMENT_LETTERS.filter((l) => !typed || l.letter === typed.toUpperCase()).map((l) => ({
    label: l.letter,
    kind: 'element',
    detail: l.title,
    documentation: `${l.fields}\n\n${l.note}`,
    replace,
  }));
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
  for (const doc of Object.values(analysis.documents)) for (const c of doc.cards) if (c.kind === 'element' && c.letter === 'V') names.add(c.name.text);
  return [...names].map((n) => ({ label: n, kind: 'element', detail: 'voltage source whose current controls this element', replace }));
}

function nodeItems(analysis: Analysis, doc: ParsedDocument, scope: SubcktScope | undefined, replace: Span): CompletionData[] {
  const names = new Map<string, string>();
  const docs = scope ? [doc] : Object.values(analysis.documents);
  for (const d of docs) {
    for (const c of d.cards) {
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

// Parameter names inside expressions and assignments: finding the identifier under the cursor and the definition it means.

import type { Analysis, ParamSymbol } from '../analysis';
import type { Card, ParsedDocument, Token } from '../syntax/ast';
import type { Span } from '../types';
import { scopeAt, type SubcktScope } from './document-index';

/** Names an expression may use that are not parameters. */
const RESERVED = new Set(['pi', 'e', 'true', 'false']);

/** One identifier inside a token's text. */
export interface IdentifierRef {
  name: string;
  span: Span;
}

/**
 * The identifiers of an expression or value text (numbers with scale suffixes such as
 * `10k` are skipped, as are function names followed by `(` and the constants pi and e).
 */
export function identifiersOf(token: Token): IdentifierRef[] {
  const text = token.text;
  const base = token.span.start;
  const out: IdentifierRef[] = [];
  let i = 0;
  while (i < text.length) {
    const c = text[i];
    if (isDigit(c) || (c === '.' && isDigit(text[i + 1] ?? ''))) {
      // A number, its exponent and any suffix or unit letters belong to it.
      i++;
      while (i < text.length && (isDigit(text[i]) || text[i] === '.')) i++;
      if ((text[i] === 'e' || text[i] === 'E') && /[-+0-9]/.test(text[i + 1] ?? '')) {
        i += 2;
        while (i < text.length && isDigit(text[i])) i++;
      }
      while (i < text.length && isWordChar(text[i])) i++;
      continue;
    }
    if (isIdentStart(c)) {
      const start = i;
      while (i < text.length && isWordChar(text[i])) i++;
      const name = text.slice(start, i);
      let j = i;
      while (text[j] === ' ') j++;
      if (text[j] === '(' || RESERVED.has(name.toLowerCase())) continue;
      out.push({ name, span: { start: base + start, end: base + i } });
      continue;
    }
    i++;
  }
  return out;
}

/** The identifier of `token` that holds `offset`. */
export function identifierAt(token: Token, offset: number): IdentifierRef | undefined {
  return identifiersOf(token).find((r) => r.span.start <= offset && offset <= r.span.end);
}

/** The parameter a name written in `scope` refers to: the subcircuit's own parameter first, then a top-level one. */
export function resolveParam(analysis: Analysis, uri: string, scope: SubcktScope | undefined, name: string): ParamSymbol | undefined {
  const lower = name.toLowerCase();
  const matches = analysis.symbols.params.filter((p) => p.name.toLowerCase() === lower);
  if (scope) {
    const local = matches.find((p) => p.scope === scope.name);
    if (local) return local;
  }
  return matches.find((p) => p.scope === '');
}

/** The tokens of a card that may refer to parameters: expressions and assignment values. */
export function valueTokens(card: Card): Token[] {
  const out: Token[] = [];
  for (const t of card.tokens) if (t.kind === 'expr') out.push(t);
  if ('params' in card) for (const a of card.params) if (a.value.kind === 'word') out.push(a.value);
  return out;
}

/** Every use of a parameter name in a document, with the scope it appears in (for references and rename). */
export function parameterUses(doc: ParsedDocument): { ref: IdentifierRef; scope: SubcktScope | undefined }[] {
  const out: { ref: IdentifierRef; scope: SubcktScope | undefined }[] = [];
  for (const card of doc.cards) {
    const tokens = valueTokens(card);
    if (tokens.length === 0) continue;
    const scope = scopeAt(doc, card.span.start);
    // The .subckt card's own defaults are evaluated in the enclosing scope's sense but name the subcircuit's parameters.
    for (const t of tokens) for (const ref of identifiersOf(t)) out.push({ ref, scope });
  }
  return out;
}

function isDigit(c: string): boolean {
  return c >= '0' && c <= '9';
}
function isIdentStart(c: string): boolean {
  return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || c === '_';
}
function isWordChar(c: string): boolean {
  return isIdentStart(c) || isDigit(c);
}

// Turns a value field (a number, a bare parameter name or a braced/quoted expression) into a number in a scope.

import type { Token } from '../syntax/ast';
import type { RelatedLocation, Span } from '../types';
import type { ParamScope } from './expressions';
import { parseNumber } from './units';

/** A number read from a field, or what is wrong with it and where. */
export type ValueResult =
  | { ok: true; value: number }
  | { ok: false; message: string; span: Span; related?: RelatedLocation[]; inherited?: boolean };

/** The expression inside a `{…}` or `'…'` token and the document offset of its first character. */
export function expressionOf(tok: Token): { source: string; offset: number } {
  const t = tok.text;
  const open = t.charAt(0);
  if (tok.kind === 'expr' && (open === '{' || open === "'")) {
    const close = open === '{' ? '}' : "'";
    const closed = t.length >= 2 && t.endsWith(close);
    return { source: joinContinuations(t.slice(1, closed ? -1 : undefined)), offset: tok.span.start + 1 };
  }
  return { source: t, offset: tok.span.start };
}

/**
 * An expression written over `+` continuation lines, as one line: each line break and the `+`
 * after it become blanks of the same length, so offsets into the source still point at the text.
 */
export function joinContinuations(source: string): string {
  if (source.indexOf('\n') < 0 && source.indexOf('\r') < 0) return source;
  return source.replace(/[\r\n]+[ \t]*\+/g, (m) => ' '.repeat(m.length)).replace(/[\r\n]/g, ' ');
}

const IDENTIFIER = /^[A-Za-z_][A-Za-z0-9_]*$/;

/**
 * Reads a value field in `scope`. A word is an engineering number (`4.7k`, `10kOhm`) or, when it
 * is a plain name of a parameter in scope, that parameter's value; an expression token is
 * evaluated in the closed expression scope.
 */
export function tokenValue(tok: Token, scope: ParamScope, uri: string): ValueResult {
  if (tok.kind === 'expr') {
    const { source, offset } = expressionOf(tok);
    const r = scope.evaluate(uri, source, offset);
    if (r.ok) return r;
    // An error with no text of its own (an empty `{}`, or `{` as the last character of a file) points at the braces.
    const span = r.error.span.end > r.error.span.start ? r.error.span : tok.span;
    return { ok: false, message: r.error.message, span, related: r.error.related, inherited: r.error.inherited };
  }
  const n = parseNumber(tok.text);
  if (n.ok) return n;
  if (IDENTIFIER.test(tok.text) && scope.definesVisible(tok.text)) {
    const r = scope.lookup(tok.text, tok.span);
    if (r.ok) return r;
    return { ok: false, message: r.error.message, span: tok.span, related: r.error.related, inherited: r.error.inherited };
  }
  if (IDENTIFIER.test(tok.text)) {
    return { ok: false, message: `\`${tok.text}\` is neither a number nor a parameter in scope.`, span: tok.span };
  }
  return { ok: false, message: n.message, span: tok.span };
}

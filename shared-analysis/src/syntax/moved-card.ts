// A parsed card copied with every offset moved: for a card an edit before it shifted but did not change.

import type { Card, Token } from './ast';
import type { Span } from '../types';
import { ParsedElementCard } from './element-card';
import { SpanToken, isSpanToken } from './span-token';

/**
 * The position of a value among a card's tokens (by identity), or −1: a scan for the few tokens of
 * most cards, a table for a long one (a model card with many parameters).
 */
export function tokenFinder(tokens: readonly Token[]): (v: object) => number {
  if (tokens.length <= 16) return (v) => tokens.indexOf(v as Token);
  const index = new Map<object, number>();
  tokens.forEach((t, i) => index.set(t, i));
  return (v) => index.get(v) ?? -1;
}

/** A `{ start, end }` offset pair and nothing else. */
export function isSpan(v: object): v is Span {
  const s = v as Partial<Span>;
  return typeof s.start === 'number' && typeof s.end === 'number' && Object.keys(v).length === 2;
}

/**
 * A copy of a card with every offset moved `delta` characters (the card itself is left as it is). Within a
 * card only its tokens are reached twice (in `tokens` and in the field that holds one): the copies of the
 * fields point at the copied tokens, so the copy has the card's shape. Written as plain loops: it runs for
 * every card after an edit that changed the text's length (a generic walk took 5–10 µs a card).
 */
export function movedCard(card: Card, delta: number): Card {
  const from = card.tokens;
  const tokens: Token[] = new Array(from.length);
  for (let i = 0; i < from.length; i++) {
    const t = from[i]!;
    tokens[i] = movedToken(t, delta);
  }
  // An element card's copy is made as the parser makes one (its fields are then set again in the card's order), so it
  // keeps the layout of a parsed card rather than a grown literal's.
  const out = (card.kind === 'element' ? new ParsedElementCard(card.letter, card.name, card.span, tokens) : {}) as Record<string, unknown>;
  const fields = card as unknown as Record<string, unknown>;
  for (const k in fields) out[k] = k === 'tokens' ? tokens : movedValue(fields[k], from, tokens, delta);
  return out as unknown as Card;
}

/** A token moved `delta` characters: a token that is its own span (as the parser makes them) as one too. */
function movedToken(t: Token, delta: number): Token {
  if (isSpanToken(t)) return new SpanToken(t.text, t.start + delta, t.end + delta, t.kind);
  return { text: t.text, span: { start: t.span.start + delta, end: t.span.end + delta }, kind: t.kind };
}

/** A field of a card copied for `movedCard`: a token is its copy, a span is moved, anything else copied field by field. */
function movedValue(v: unknown, from: readonly Token[], tokens: Token[], delta: number): unknown {
  if (v === null || typeof v !== 'object') return v;
  if (Array.isArray(v)) {
    // The parser's shared empty lists (frozen) hold nothing to move: the copy shares them too.
    if (v.length === 0 && Object.isFrozen(v)) return v;
    const out: unknown[] = new Array(v.length);
    for (let i = 0; i < v.length; i++) out[i] = movedValue(v[i], from, tokens, delta);
    return out;
  }
  const i = from.indexOf(v as Token);
  if (i >= 0) return tokens[i];
  // A token that is its own span and not among the card's tokens: its own moved copy (walking its fields would not end).
  if (isSpanToken(v)) return movedToken(v, delta);
  const o = v as Record<string, unknown>;
  const out: Record<string, unknown> = {};
  let keys = 0;
  for (const k in o) {
    out[k] = movedValue(o[k], from, tokens, delta);
    keys++;
  }
  // A span: an offset pair and nothing else.
  if (keys === 2 && typeof out['start'] === 'number' && typeof out['end'] === 'number') {
    out['start'] = (out['start'] as number) + delta;
    out['end'] = (out['end'] as number) + delta;
  }
  return out;
}

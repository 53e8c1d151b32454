// The token the parser keeps: its own offsets, so that it serves as its span (`token.span === token`).

import type { Token } from './ast';
import type { Span } from '../types';

/**
 * A parsed token that is its own span: `start` and `end` are its offsets and `span` is the token itself, one object
 * where a token and its span were two (every field of every card is kept for the whole analysis: at 100,000
 * elements about 450,000 tokens; docs/PERFORMANCE.md, "What the parse and the elaboration keep: tokens that are
 * their own spans"). `span` is an own field, not a getter, so a structured clone (a worker's message) keeps it: the
 * clone's `span` is the clone. The token's fields are a token literal's (`text`, `span`, `kind`) followed by `start`
 * and `end`.
 *
 * A reader that takes `token.span` gets the token: copy it as `{ start, end }` (`plainSpan`) rather than by spreading
 * it, and compare offsets rather than keys. JSON writes the token as a token literal with its offsets after it
 * (`toJSON`), so what JSON gives back reads both as a token and as a span; a structured clone does not keep `toJSON`
 * (a clone refers to itself, and JSON refuses it).
 */
export class SpanToken implements Token, Span {
  text: string;
  span: Span;
  kind: 'word' | 'expr';
  start: number;
  end: number;
  constructor(text: string, start: number, end: number, kind: 'word' | 'expr') {
    this.text = text;
    this.span = this;
    this.kind = kind;
    this.start = start;
    this.end = end;
  }

  /**
   * The token as JSON, its fields in order with `span` written as a pair of its own: a token literal (`text`, `span`,
   * `kind`) followed by the offsets, which is what a reader of a token and a reader of a span each find again.
   */
  toJSON(): Token & Span {
    return { text: this.text, span: { start: this.start, end: this.end }, kind: this.kind, start: this.start, end: this.end };
  }
}

/** Whether `v` is a token that is its own span (a `SpanToken`, or a structured clone of one). */
export function isSpanToken(v: object): v is Token & Span {
  return (v as Partial<Token>).span === v;
}

/** `{ start, end }` of a span, as a plain pair of its own (for a span that may be a token). */
export function plainSpan(s: Span): Span {
  return { start: s.start, end: s.end };
}

/** A span moved `delta` characters, as a new object of its kind: a token that is its own span gives a moved token. */
export function movedSpan(s: Span, delta: number): Span {
  return isSpanToken(s) ? new SpanToken(s.text, s.start + delta, s.end + delta, s.kind) : { start: s.start + delta, end: s.end + delta };
}

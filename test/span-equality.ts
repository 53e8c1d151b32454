// Loaded before every test file (vitest.config.mts, `setupFiles`): how `toEqual` compares a span with a token that is
// its own span.
//
// The parser keeps each field as a token that serves as its span (`SpanToken`: `token.span === token`), so a finding,
// an origin or a symbol may hold a token where it held a plain `{ start, end }` pair; a copy made elsewhere (a moved
// finding, an element taken in over JSON) holds the plain pair. A span means its two offsets (`Span` in
// shared-analysis/src/types.ts), so such a token equals a plain pair with the same offsets. Nothing else is relaxed:
// two tokens are compared field by field (text and kind included), and a pair with any other field is no span.

import { expect } from 'vitest';

function isSelfSpan(v: unknown): v is { start: number; end: number } {
  return !!v && typeof v === 'object' && (v as { span?: unknown }).span === v && typeof (v as { start?: unknown }).start === 'number';
}

function isPlainPair(v: unknown): v is { start: number; end: number } {
  if (!v || typeof v !== 'object' || Array.isArray(v)) return false;
  const keys = Object.keys(v);
  return keys.length === 2 && typeof (v as { start?: unknown }).start === 'number' && typeof (v as { end?: unknown }).end === 'number';
}

expect.addEqualityTesters([
  function tokenAsSpan(a: unknown, b: unknown): boolean | undefined {
    if (isSelfSpan(a) && isPlainPair(b)) return a.start === b.start && a.end === b.end;
    if (isPlainPair(a) && isSelfSpan(b)) return a.start === b.start && a.end === b.end;
    return undefined;
  },
]);

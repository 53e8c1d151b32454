// Limits what findings quote of included files: a short excerpt at most, and nothing of a file that does not read as a netlist.

import type { ParsedDocument } from './syntax/ast';
import type { IncludeSymbol } from './analysis';
import type { Finding } from './types';

/** Longest quoted excerpt of an included file's text a message keeps (characters). */
export const MAX_INCLUDED_EXCERPT = 40;

/** A document is taken for "not a netlist" when more than this share of its cards fail to read. */
const NOT_NETLIST_SHARE = 0.5;

/**
 * Findings with quotes from included files shortened, and the findings of an included file
 * that does not read as a netlist (most of its cards unreadable: a data file, a key, a log)
 * replaced by one finding at the include line that quotes nothing of it. The root
 * document is the user's own text and is left as it is.
 */
export function limitIncludedExcerpts(findings: Finding[], rootUri: string, documents: Record<string, ParsedDocument>, includes: readonly IncludeSymbol[]): Finding[] {
  const notNetlist = new Map<string, { unreadable: number; cards: number }>();
  for (const [uri, doc] of Object.entries(documents)) {
    if (uri === rootUri) continue;
    const cards = doc.cards.filter((c) => c.kind !== 'comment' && c.kind !== 'title');
    if (cards.length === 0) continue;
    const failing = new Set<number>();
    for (const e of doc.errors) {
      const i = cardIndexAt(cards, e.span.start);
      if (i >= 0) failing.add(i);
    }
    for (let i = 0; i < cards.length; i++) if (cards[i]!.kind === 'error') failing.add(i);
    if (failing.size > cards.length * NOT_NETLIST_SHARE) notNetlist.set(uri, { unreadable: failing.size, cards: cards.length });
  }
  const out: Finding[] = [];
  const reported = new Set<string>();
  for (const f of findings) {
    if (f.uri === rootUri) {
      out.push(f);
      continue;
    }
    const bad = notNetlist.get(f.uri);
    if (!bad) {
      out.push({ ...f, message: shortenQuotes(f.message) });
      continue;
    }
    if (reported.has(f.uri)) continue;
    reported.add(f.uri);
    const at = includes.find((i) => i.target === f.uri);
    out.push({
      code: 'include-not-netlist',
      severity: 'error',
      message: `This included file does not read as a netlist: ${bad.unreadable} of its ${bad.cards} cards cannot be read. None of its text is quoted here; check that the path names the netlist or library you meant.`,
      uri: at?.uri ?? f.uri,
      span: at?.span ?? { start: 0, end: 0 },
      data: { target: f.uri, unreadableCards: bad.unreadable, cards: bad.cards },
    });
  }
  return out;
}

/** Index of the card (sorted by start) whose span holds `offset`, or -1. */
function cardIndexAt(cards: readonly { span: { start: number; end: number } }[], offset: number): number {
  let lo = 0;
  let hi = cards.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    const c = cards[mid]!;
    if (offset < c.span.start) hi = mid - 1;
    else if (offset > c.span.end) lo = mid + 1;
    else return mid;
  }
  return -1;
}

/** Every `…` or '…' quote in a message cut to MAX_INCLUDED_EXCERPT characters. */
export function shortenQuotes(message: string): string {
  return message.replace(/(`|')([^`'\n]*)\1/g, (whole, q: string, inner: string) =>
    inner.length <= MAX_INCLUDED_EXCERPT ? whole : `${q}${cut(inner, MAX_INCLUDED_EXCERPT - 1)}…${q}`,
  );
}

/** The first `n` UTF-16 units of `s`, not splitting a surrogate pair. */
function cut(s: string, n: number): string {
  const c = s.charCodeAt(n - 1);
  return s.slice(0, c >= 0xd800 && c <= 0xdbff ? n - 1 : n);
}

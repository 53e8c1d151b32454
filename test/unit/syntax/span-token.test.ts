// The parser's tokens are their own spans (`SpanToken`, syntax/span-token.ts): one object per field where a token
// and its span were two. What readers rely on is checked against the netlist text itself (a field's offsets must
// slice its text out of the line it is written on) and against what a plain `{ start, end }` pair does in JSON and in
// a structured clone (the HTML structured clone algorithm keeps an object graph's cycles; JSON writes an object's
// `toJSON` result, ECMA-262 SerializeJSONProperty; both from memory).

import { describe, expect, it } from 'vitest';
import { Worker } from 'node:worker_threads';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { movedCard } from '../../../shared-analysis/src/syntax/moved-card';
import { isSpanToken, plainSpan, SpanToken } from '../../../shared-analysis/src/syntax/span-token';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import type { Card, ElementCard, SkippedCard, Token } from '../../../shared-analysis/src/syntax/ast';
import type { Workspace } from '../../../shared-analysis/src/types';

const URI = 'file:///span-token.cir';

// Invented: every kind of card the parser reads fields from, a subcircuit used twice and a skipped block whose
// closing card is kept as a token outside the card's `tokens`.
const NETLIST = [
  'span tokens',
  '.param rv=10k',
  '.model QN NPN (IS=1e-15 BF=100)',
  '.subckt cell a b',
  'RC a b {rv}',
  'QC a a b QN',
  '.ends cell',
  'X1 vcc 0 cell',
  'X2 vcc n2 cell',
  'VCC vcc 0 DC 5',
  'R2 n2 0 RMOD 5k TC=0.001,0.0002',
  '.model RMOD R (TC1=0)',
  '.control',
  'run',
  '.endc',
  '.op',
  '.end',
].join('\n');

function parsed(text = NETLIST) {
  return parse(URI, text, { hasTitle: true });
}

/** Every token a card holds, in its `tokens` or in any field (a skipped block's closer is in no `tokens`). */
function tokensIn(card: Card): Token[] {
  const out = new Set<Token>(card.tokens);
  const walk = (v: unknown): void => {
    if (!v || typeof v !== 'object') return;
    if (Array.isArray(v)) return v.forEach(walk);
    const o = v as Record<string, unknown>;
    if (typeof o['text'] === 'string' && (o['kind'] === 'word' || o['kind'] === 'expr') && o['span']) {
      out.add(o as unknown as Token);
      return;
    }
    for (const k in o) if (k !== 'tokens') walk(o[k]);
  };
  for (const k in card) if (k !== 'tokens') walk((card as unknown as Record<string, unknown>)[k]);
  return [...out];
}

describe('a parsed token is its own span', () => {
  it('holds the offsets that slice its text out of the netlist, and its span is itself', () => {
    const doc = parsed();
    let count = 0;
    let outside = 0;
    for (const card of doc.cards) {
      for (const t of tokensIn(card)) {
        // The `TC=a,b` form's second coefficient is read as a `TC2` assignment whose name is written nowhere: its name
        // token borrows the value's place (parser.ts), so its text is not the text there.
        if (t.text === 'TC2' && !card.tokens.includes(t)) {
          expect(t.span).toBe(card.kind === 'element' ? card.params.find((a) => a.name === t)!.value : undefined);
          continue;
        }
        expect(t.span, t.text).toBe(t);
        expect(isSpanToken(t)).toBe(true);
        expect(NETLIST.slice(t.span.start, t.span.end), t.text).toBe(t.text);
        if (!card.tokens.includes(t)) outside++;
        count++;
      }
    }
    expect(count).toBeGreaterThan(40);
    // The `.endc` closer.
    expect(outside).toBe(1);
  });

  it('reads back from JSON as a token and as a span, and is copied by `plainSpan` to a pair of its own', () => {
    const t = parsed().cards.find((c): c is ElementCard => c.kind === 'element' && c.name.text === 'VCC')!.name;
    const pair = { start: NETLIST.indexOf('VCC'), end: NETLIST.indexOf('VCC') + 3 };
    // A token literal with a span of its own (the form tokens had), then the offsets a span reader takes.
    expect(JSON.stringify(t)).toBe(JSON.stringify({ text: 'VCC', span: pair, kind: 'word', ...pair }));
    const back = JSON.parse(JSON.stringify({ span: t.span })) as { span: Token & { start: number; end: number } };
    expect([back.span.start, back.span.end, back.span.text, back.span.span.start, back.span.span.end]).toEqual([pair.start, pair.end, 'VCC', pair.start, pair.end]);
    const copy = plainSpan(t.span);
    expect(Object.keys(copy)).toEqual(['start', 'end']);
    expect(copy).not.toBe(t);
    expect([copy.start, copy.end]).toEqual([pair.start, pair.end]);
  });

  it('stays its own span through a structured clone, and through a message to another thread and back', async () => {
    const card = parsed().cards.find((c): c is ElementCard => c.kind === 'element' && c.name.text === 'R2')!;
    const check = (copy: ElementCard) => {
      expect(copy.tokens.map((t) => [t.text, t.span.start, t.span.end, t.kind])).toEqual(card.tokens.map((t) => [t.text, t.span.start, t.span.end, t.kind]));
      for (const t of copy.tokens) expect(t.span).toBe(t);
      // A field that holds a token holds the copy of the same token, as in the parsed card.
      expect(copy.tokens).toContain(copy.name);
      expect(copy.tokens).toContain(copy.value);
      for (const n of copy.nodes) expect(copy.tokens).toContain(n);
    };
    check(structuredClone(card));
    // A worker that reads the clone it was sent, answers with what it saw, and sends the clone back.
    const worker = new Worker(
      `const { parentPort } = require('node:worker_threads');
       parentPort.on('message', (card) => parentPort.postMessage({ selfSpans: card.tokens.every((t) => t.span === t), starts: card.nodes.map((t) => t.span.start), card }));`,
      { eval: true },
    );
    try {
      const reply = await new Promise<{ selfSpans: boolean; starts: number[]; card: ElementCard }>((resolve, reject) => {
        worker.once('message', resolve);
        worker.once('error', reject);
        worker.postMessage(card);
      });
      expect(reply.selfSpans).toBe(true);
      expect(reply.starts).toEqual(card.nodes.map((t) => NETLIST.indexOf(t.text, card.span.start)));
      check(reply.card);
    } finally {
      await worker.terminate();
    }
  });

  it('is moved once when a card is copied for an edit, a token outside the card\'s `tokens` included', () => {
    const doc = parsed();
    const block = doc.cards.find((c): c is SkippedCard => c.kind === 'skipped' && c.group === 'block')!;
    expect(block.closer!.text.toLowerCase()).toBe('.endc');
    const delta = 5;
    for (const card of doc.cards) {
      const moved = movedCard(card, delta);
      const before = tokensIn(card);
      const after = tokensIn(moved);
      expect(after.map((t) => [t.text, t.span.start - delta, t.span.end - delta])).toEqual(before.map((t) => [t.text, t.span.start, t.span.end]));
      for (const t of after) if (t.text !== 'TC2' || moved.tokens.includes(t)) expect(t.span).toBe(t);
      // The original keeps its offsets.
      for (const t of before) if (t.text !== 'TC2' || card.tokens.includes(t)) expect(NETLIST.slice(t.span.start, t.span.end)).toBe(t.text);
    }
  });
});

describe('an element origin holds its card\'s node tokens', () => {
  it('shares the card\'s node list, for every element flattened from the card', () => {
    const workspace: Workspace = { read: (uri) => (uri === URI ? NETLIST : undefined), resolve: (_from, ref) => ref };
    const doc = parsed();
    const circuit = elaborate(doc, workspace, {}).circuit;
    const cardAt = (start: number) => doc.cards.find((c): c is ElementCard => c.kind === 'element' && c.span.start === start)!;
    const elements = circuit.elements.filter((e) => e.origin.uri === URI);
    expect(elements.length).toBeGreaterThanOrEqual(6);
    for (const e of elements) {
      const card = cardAt(e.origin.span.start);
      expect(e.origin.nodeSpans, e.name).toBe(card.nodes);
      // Each span slices the node name the card writes there.
      expect(e.origin.nodeSpans!.map((s) => NETLIST.slice(s.start, s.end))).toEqual(card.nodes.map((t) => t.text));
    }
    // The subcircuit's RC, flattened through X1 and X2: two elements, one list.
    const rc = elements.filter((e) => e.origin.span.start === NETLIST.indexOf('RC a b'));
    expect(rc).toHaveLength(2);
    expect(rc[0]!.origin.nodeSpans).toBe(rc[1]!.origin.nodeSpans);
  });

  it('keeps a list of its own when a node token is not its own span (a card made by other code)', () => {
    const workspace: Workspace = { read: () => undefined, resolve: (_from, ref) => ref };
    const doc = parse(URI, 't\nR1 a 0 1k\nV1 a 0 1\n', { hasTitle: true });
    const r1 = doc.cards.find((c): c is ElementCard => c.kind === 'element' && c.name.text === 'R1')!;
    const plain = r1.nodes.map((t): Token => ({ text: t.text, span: { start: t.span.start, end: t.span.end }, kind: t.kind }));
    (r1 as { nodes: readonly Token[] }).nodes = plain;
    const circuit = elaborate(doc, workspace, {}).circuit;
    const el = circuit.elements.find((e) => e.name.toUpperCase() === 'R1')!;
    expect(el.origin.nodeSpans).not.toBe(r1.nodes);
    expect(el.origin.nodeSpans).toEqual(plain.map((t) => t.span));
    expect(el.origin.nodeSpans![0]).toBe(plain[0]!.span);
  });
});

describe('a token made by its constructor', () => {
  it('has the fields of a token literal, then the offsets', () => {
    const t = new SpanToken('vcc', 3, 6, 'word');
    expect(Object.keys(t)).toEqual(['text', 'span', 'kind', 'start', 'end']);
    expect(t.span).toBe(t);
  });
});

// What the parser and the elaborator keep per card and per element: the fields that are set and nothing else, in
// the order a plain literal would give them, and field texts that read as written. The parser builds element cards
// with a constructor and shares repeated field texts, and the elaborator picks an origin literal per combination of
// optional spans, to keep fewer objects over a large netlist (docs/PERFORMANCE.md, "What the run keeps and the
// collector at 100k"); these tests check that nothing a reader sees changed with that. The expected field lists are
// the ones `ast.ts` and `circuit.ts` document (an independent statement of the shapes, written out here).

import { describe, expect, it } from 'vitest';
import { MAX_SHARED_TEXTS, parse, sharedText } from '../../../shared-analysis/src/syntax/parser';
import { movedCard } from '../../../shared-analysis/src/syntax/moved-card';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import type { ElementCard } from '../../../shared-analysis/src/syntax/ast';
import type { Workspace } from '../../../shared-analysis/src/types';

const URI = 'file:///kept.cir';

function cardsOf(text: string): ElementCard[] {
  return parse(URI, text, { hasTitle: true }).cards.filter((c): c is ElementCard => c.kind === 'element');
}

function circuitOf(text: string) {
  const workspace: Workspace = { read: (uri) => (uri === URI ? text : undefined), resolve: (_from, ref) => ref };
  return elaborate(parse(URI, text, { hasTitle: true }), workspace, {}).circuit;
}

const NETLIST = [
  'kept shapes',
  'VCC vcc 0 DC 5',
  '.model QN NPN (IS=1e-15 BF=100)',
  'RR0 vcc r0 10k',
  'QR0 r0 r0 0 QN',
  'QO0 o0 r0 0 QN 2',
  'RL0 vcc o0 1k TC1=0.001',
  'R2 vcc R0 RMOD 5k',
  '.model RMOD R (TC1=0)',
  'T1 o0 0 t2 0',
  'RT t2 0 50',
  'K1 L1 L2 0.9',
  '.end',
].join('\n');

describe('element cards keep the fields that are set, in a literal order', () => {
  const cards = cardsOf(NETLIST);
  const byName = new Map(cards.map((c) => [c.name.text, c]));

  it('has exactly the fields each card sets, in the order the parser sets them', () => {
    const base = ['kind', 'letter', 'name', 'nodes', 'params', 'span', 'tokens'];
    expect(Object.keys(byName.get('VCC')!)).toEqual([...base, 'source']);
    expect(Object.keys(byName.get('RR0')!)).toEqual([...base, 'value']);
    expect(Object.keys(byName.get('QR0')!)).toEqual([...base, 'model']);
    expect(Object.keys(byName.get('QO0')!)).toEqual([...base, 'model', 'area']);
    // A resistor with a model and a value: the value is set first (parser.ts, case 'R').
    expect(Object.keys(byName.get('R2')!)).toEqual([...base, 'value', 'model']);
    // A line sets only its nodes; a coupling sets its inductors and value.
    expect(Object.keys(byName.get('T1')!)).toEqual(base);
    expect(Object.keys(byName.get('K1')!)).toEqual([...base, 'coupled', 'value']);
    // No field is present with an undefined value (a reader testing `'model' in card` sees what was written).
    for (const c of cards) for (const [k, v] of Object.entries(c)) expect(v, `${c.name.text}.${k}`).not.toBeUndefined();
  });

  it('reads as a plain record: JSON, spread and structured clone give the same fields', () => {
    const q = byName.get('QO0')!;
    const copy = JSON.parse(JSON.stringify(q)) as Record<string, unknown>;
    expect(Object.keys(copy)).toEqual(Object.keys(q));
    // JSON writes each token as a token literal followed by its offsets (a token is its own span: span-token.test.ts).
    expect(JSON.stringify(copy['tokens'])).toBe(JSON.stringify(q.tokens.map((t) => ({ text: t.text, span: { start: t.span.start, end: t.span.end }, kind: t.kind, start: t.span.start, end: t.span.end }))));
    // A spread and a structured clone keep the tokens whole, texts and kinds included (no span equality here: test/span-equality.ts).
    const spread = { ...q };
    const clone = structuredClone(q);
    expect(Object.keys(clone)).toEqual(Object.keys(q));
    expect(clone.tokens.map((t) => [t.text, t.kind, t.span.start, t.span.end])).toEqual(spread.tokens.map((t) => [t.text, t.kind, t.span.start, t.span.end]));
    expect(clone).toEqual(spread);
  });

  it('gives a card without parameters an empty list that cannot be changed, and one with parameters its own', () => {
    const rr0 = byName.get('RR0')!;
    expect(rr0.params).toEqual([]);
    expect(() => (rr0.params as unknown[]).push(1)).toThrow(TypeError);
    expect(byName.get('K1')!.nodes).toEqual([]);
    const rl0 = byName.get('RL0')!;
    expect(rl0.params.map((a) => [a.name.text, a.value.text])).toEqual([['TC1', '0.001']]);
    expect(rl0.params).not.toBe(byName.get('QR0')!.params);
  });

  it('keeps every field text as written, letter case included, when texts repeat across cards', () => {
    // `r0` is written four times and `R0` once (another node: names are compared without case later, not here).
    expect(byName.get('QR0')!.nodes.map((t) => t.text)).toEqual(['r0', 'r0', '0']);
    expect(byName.get('R2')!.nodes.map((t) => t.text)).toEqual(['vcc', 'R0']);
    for (const c of cards) for (const t of c.tokens) expect(t.text, c.name.text).toBe(NETLIST.slice(t.span.start, t.span.end));
    // Two fields with the same text are still two tokens with their own spans.
    const [a, b] = byName.get('QR0')!.nodes;
    expect(a).not.toBe(b);
    expect(a!.span.start).toBeLessThan(b!.span.start);
  });
});

describe('the texts one parse shares', () => {
  it('gives the same text back, and stops adding texts at the limit', () => {
    const words = new Map<string, string>();
    expect(sharedText(words, 'r0', 2)).toBe('r0');
    expect(sharedText(words, 'vcc', 2)).toBe('vcc');
    // Full: a new text is its own and is not added; the held ones are still found.
    expect(sharedText(words, 'o0', 2)).toBe('o0');
    expect(words.size).toBe(2);
    expect([...words.keys()]).toEqual(['r0', 'vcc']);
    expect(sharedText(words, 'r' + '0', 2)).toBe('r0');
    // Far below the most entries a Map holds (2^24, from memory of V8's limit).
    expect(MAX_SHARED_TEXTS).toBeLessThanOrEqual(2 ** 22);
  });
});

describe('a card an edit moved keeps the parsed card\'s fields', () => {
  it('has the same fields in the same order, every offset moved, and the unchanged texts', () => {
    const delta = 7;
    for (const card of cardsOf(NETLIST)) {
      const moved = movedCard(card, delta) as ElementCard;
      expect(Object.keys(moved), card.name.text).toEqual(Object.keys(card));
      expect(moved.span).toEqual({ start: card.span.start + delta, end: card.span.end + delta });
      expect(moved.tokens.map((t) => [t.text, t.span.start - delta, t.span.end - delta])).toEqual(card.tokens.map((t) => [t.text, t.span.start, t.span.end]));
      // A field that holds a token holds the moved copy of it, found among the moved card's tokens.
      expect(moved.tokens).toContain(moved.name);
      for (const t of moved.nodes) expect(moved.tokens).toContain(t);
      // The original is left as it was.
      expect(card.tokens[0]!.span.start).toBe(NETLIST.indexOf(card.name.text + ' '));
    }
    const rr0 = cardsOf(NETLIST).find((c) => c.name.text === 'RR0')!;
    const moved = movedCard(rr0, delta) as ElementCard;
    expect(moved.params).toEqual([]);
    expect(() => (moved.params as unknown[]).push(1)).toThrow(TypeError);
    expect(moved.value!.text).toBe('10k');
  });
});

describe('element origins keep the spans that are given, in a literal order', () => {
  it('has valueSpan only for an element with a value field and modelSpan only for one with a model field', () => {
    const circuit = circuitOf(NETLIST);
    const keys = new Map(circuit.elements.map((e) => [e.name, Object.keys(e.origin)]));
    const base = ['uri', 'span', 'nodeSpans', 'instances'];
    expect(keys.get('VCC')).toEqual([...base, 'valueSpan']);
    expect(keys.get('RR0')).toEqual([...base, 'valueSpan']);
    expect(keys.get('QR0')).toEqual([...base, 'modelSpan']);
    expect(keys.get('R2')).toEqual([...base, 'valueSpan', 'modelSpan']);
    expect(keys.get('T1')).toEqual(base);
    const r2 = circuit.elements.find((e) => e.name === 'R2')!;
    expect(NETLIST.slice(r2.origin.valueSpan!.start, r2.origin.valueSpan!.end)).toBe('5k');
    expect(NETLIST.slice(r2.origin.modelSpan!.start, r2.origin.modelSpan!.end)).toBe('RMOD');
  });
});

// Property tests of the parser: arbitrary and mutated netlists never throw and always give well-formed, ordered, located cards.

import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { parse } from '../../shared-analysis/src/syntax/parser';
import type { ParsedDocument } from '../../shared-analysis/src/syntax/ast';
import type { Span } from '../../shared-analysis/src/types';

const SEED = 20260601;
const RUNS = 300;

/** Netlists of our own invention used as mutation seeds. */
const SEEDS = [
  [
    'Sensor bias: NPN mirror with a helper transistor',
    '* rails',
    'VCC vcc 0 DC 5',
    'VEE vee 0 -5 ; negative rail',
    '.param rref={ (5 - 0.7) / 100u } ratio=2',
    'R1 vcc ref {rref}',
    'Q1 ref buf vee QN',
    'Q3 vcc ref buf QN $ helper',
    'Q2 out buf vee 0 QN {ratio}',
    'RL vcc out 10k M=1',
    '.model QN NPN (IS=1e-16 BF=100',
    '* early voltage from the data sheet',
    '+ VAF=80)',
    '.temp 27 85',
    '.op',
    '.end',
  ].join('\n'),
  [
    'Cascode PMOS load with a subcircuit',
    '.subckt PLOAD top out bias PARAMS: w=10u l=1u',
    'M1 mid bias top top PCH W={w} L={l}',
    'M2 out bias mid top PCH W={w} L={l} M=2',
    '.ends PLOAD',
    'X1 vdd out pb PLOAD w=20u',
    'V1 vdd 0 PULSE(0 3.3 1n 1n 1n 10n 20n)',
    'I1 pb 0 PWL(0 10u 1u 20u)',
    'E1 o 0 out 0 10',
    'F1 0 o V1 2',
    '.include "models/cmos.lib"',
    '.lib \'corners.lib\' slow',
    '.model PCH PMOS(KP=40u VTO=-0.5 LAMBDA=0.05)',
    '.option tnom=25 quiet',
    '.tran 1n 100n',
  ].join('\r\n'),
];

const NETLIST_PIECES = [
  'R', 'Q', 'M', 'X', 'V', 'I', 'D', 'E', 'F', 'K', '1', '0', 'a', ' ', ' ', '\t', '\n', '\r', '\r\n', '+', '*', ';', '$', '$ ',
  '{', '}', '(', ')', '=', ',', "'", '"', '.', '.model', '.subckt', '.ends', '.end', '.lib', '.include', '.param', 'PARAMS:',
  'PULSE(', 'PWL', 'SIN', 'DC', 'AC', 'POLY(', 'VALUE=', 'OFF', 'NPN', '1k', '-5', '𝛃', '\ud800', '\udfff', '\u0000', '\ufeff',
];

/** A string from netlist-shaped pieces, so the parser's branches are reached often. */
const netlistish = fc.array(fc.constantFrom(...NETLIST_PIECES), { maxLength: 120 }).map((parts) => parts.join(''));
/** Any UTF-16 code units, including lone surrogates and control characters. */
const codeUnits = fc.array(fc.integer({ min: 0, max: 0xffff }), { maxLength: 200 }).map((cs) => String.fromCharCode(...cs));

type Mutation =
  | { op: 'insert'; at: number; text: string }
  | { op: 'delete'; at: number; length: number }
  | { op: 'duplicate'; at: number; length: number }
  | { op: 'splice-lines'; from: number; to: number };

const mutation: fc.Arbitrary<Mutation> = fc.oneof(
  fc.record({ op: fc.constant('insert' as const), at: fc.nat(), text: fc.constantFrom(...NETLIST_PIECES) }),
  fc.record({ op: fc.constant('delete' as const), at: fc.nat(), length: fc.integer({ min: 1, max: 12 }) }),
  fc.record({ op: fc.constant('duplicate' as const), at: fc.nat(), length: fc.integer({ min: 1, max: 30 }) }),
  fc.record({ op: fc.constant('splice-lines' as const), from: fc.nat(), to: fc.nat() }),
);

function mutate(text: string, m: Mutation): string {
  const n = text.length + 1;
  switch (m.op) {
    case 'insert': {
      const at = m.at % n;
      return text.slice(0, at) + m.text + text.slice(at);
    }
    case 'delete': {
      const at = m.at % n;
      return text.slice(0, at) + text.slice(at + m.length);
    }
    case 'duplicate': {
      const at = m.at % n;
      return text.slice(0, at + m.length) + text.slice(at, at + m.length) + text.slice(at + m.length);
    }
    case 'splice-lines': {
      // Move one line elsewhere (the line keeps whatever break it had).
      const lines = text.split('\n');
      const [line] = lines.splice(m.from % lines.length, 1);
      lines.splice(m.to % (lines.length + 1), 0, line ?? '');
      return lines.join('\n');
    }
  }
}

const mutated = fc
  .tuple(fc.constantFrom(...SEEDS), fc.array(mutation, { minLength: 1, maxLength: 8 }))
  .map(([seed, ms]) => ms.reduce(mutate, seed));

/**
 * The structural promises of every parse. Plain comparisons rather than `expect` per field keep the
 * hundreds of runs fast; the first broken promise throws with a description and fails the property.
 */
function assertWellFormed(doc: ParsedDocument, text: string): void {
  const fail = (what: string): never => {
    throw new Error(`${what} (input ${JSON.stringify(text.slice(0, 200))})`);
  };
  const inRange = (s: Span, what: string): void => {
    if (!Number.isInteger(s.start) || !Number.isInteger(s.end) || s.start < 0 || s.start > s.end || s.end > text.length) {
      fail(`${what} span ${JSON.stringify(s)} is not within [0, ${text.length}]`);
    }
  };
  if (doc.text !== text) fail('document text differs from the input');
  let lastEnd = 0;
  for (const card of doc.cards) {
    inRange(card.span, card.kind);
    // In order and not overlapping; comment lines inside a card lie within it.
    if (card.span.start < lastEnd) fail(`${card.kind} card at ${card.span.start} overlaps the card before, which ends at ${lastEnd}`);
    lastEnd = card.span.end;
    for (const c of card.comments ?? []) {
      if (c.span.start <= card.span.start || c.span.end >= card.span.end) fail('an inner comment lies outside its card');
    }
    for (const t of card.tokens) {
      inRange(t.span, 'token');
      if (text.slice(t.span.start, t.span.end) !== t.text) fail(`token ${JSON.stringify(t.text)} does not slice back from its span`);
      if (t.text.length === 0) fail('empty token');
      if (t.span.start < card.span.start || t.span.end > card.span.end) fail('token outside its card');
    }
    if (card.kind === 'error') {
      inRange(card.errorSpan, 'error card');
      if (card.message.length === 0) fail('error card without a message');
      if (!doc.errors.some((e) => e.message === card.message && e.span.start === card.errorSpan.start)) {
        fail(`error card message is missing from errors: ${card.message}`);
      }
    }
  }
  for (const e of doc.errors) {
    inRange(e.span, e.code);
    if (!/^[a-z]+(-[a-z]+)*$/.test(e.code)) fail(`code ${e.code} is not kebab-case`);
    if (!/[.]$/.test(e.message)) fail(`message is not a full sentence: ${e.message}`);
    if (/NaN|undefined|\[object/.test(e.message)) fail(`message shows a broken value: ${e.message}`);
  }
}

function property(arb: fc.Arbitrary<string>): void {
  fc.assert(
    fc.property(arb, fc.boolean(), (text, hasTitle) => {
      const doc = parse('fuzz://input.cir', text, { hasTitle });
      assertWellFormed(doc, text);
    }),
    { seed: SEED, numRuns: RUNS },
  );
}

describe('parse on random input', () => {
  it('reads netlist-shaped noise without throwing', () => property(netlistish));
  it('reads arbitrary UTF-16 code units without throwing', () => property(codeUnits));
  it('reads arbitrary Unicode strings without throwing', () => property(fc.string({ unit: 'binary', maxLength: 300 })));
  it('reads mutated valid netlists without throwing', () => property(mutated));

  it('has a checker that rejects broken parses', () => {
    // The properties above are only as strong as the checker; show it catches each kind of damage.
    const text = SEEDS[0];
    const damage: ((d: ParsedDocument) => void)[] = [
      (d) => { d.cards[2].tokens[0].span = { start: d.cards[2].tokens[0].span.start + 1, end: d.cards[2].tokens[0].span.end + 1 }; },
      (d) => { d.cards[3].span = { start: d.cards[2].span.start, end: d.cards[3].span.end }; },
      (d) => { d.cards[1].span = { start: 0, end: text.length + 1 }; },
      (d) => { d.errors.push({ code: 'Bad_Code', message: 'x.', span: { start: 0, end: 0 } }); },
    ];
    for (const harm of damage) {
      const doc = parse('seed.cir', text, { hasTitle: true });
      harm(doc);
      expect(() => assertWellFormed(doc, text)).toThrow();
    }
  });

  it('reads the unmutated seed netlists without errors', () => {
    for (const seed of SEEDS) {
      const doc = parse('seed.cir', seed, { hasTitle: true });
      assertWellFormed(doc, seed);
      expect(doc.errors).toEqual([]);
    }
  });
});

describe('parse on large and pathological input', () => {
  // No timing assertion: these only have to finish inside the runner's default per-test timeout.
  it('reads a 200,000-line netlist', () => {
    const lines = ['Large ladder'];
    for (let i = 0; i < 200_000; i++) {
      const k = i % 4;
      lines.push(
        k === 0 ? `R${i} n${i} n${i + 1} 1k` : k === 1 ? `Q${i} n${i} b${i} 0 QN 2` : k === 2 ? '+ M=2' : `* note ${i}`,
      );
    }
    const text = lines.join('\n');
    const doc = parse('big.cir', text, { hasTitle: true });
    expect(doc.errors).toEqual([]);
    expect(doc.cards.length).toBe(1 + 150_000);
  });

  it('reads a 1 MB line, unterminated braces and quotes, and deep nesting', () => {
    const inputs = [
      'R1 a b ' + 'x'.repeat(1_000_000),
      'R1 a b {' + '{'.repeat(200_000),
      "R1 a b '" + 'a'.repeat(200_000),
      '.model Q NPN ' + '('.repeat(100_000),
      'X1 ' + 'n '.repeat(100_000) + 'SUB',
      '+\n'.repeat(200_000),
      '='.repeat(200_000),
      '\ud800'.repeat(100_000),
    ];
    for (const text of inputs) {
      const doc = parse('edge.cir', text, { hasTitle: false });
      expect(doc.cards.length).toBeGreaterThan(0);
      for (const e of doc.errors.slice(0, 50)) expect(e.span.end).toBeLessThanOrEqual(text.length);
    }
  });
});

// Property tests of the parser: arbitrary and mutated netlists never throw and always give well-formed, ordered, located cards.

import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { parse } from '../../shared-analysis/src/syntax/parser';
import type { ParsedDocument } from '../../shared-analysis/src/syntax/ast';
import type { Span } from '../../shared-analysis/src/types';

const SEED = 20260601;
const RUNS = 400;

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

/** The structural promises of every parse. */
function assertWellFormed(doc: ParsedDocument, text: string): void {
  const inRange = (s: Span): void => {
    expect(Number.isInteger(s.start) && Number.isInteger(s.end)).toBe(true);
    expect(s.start).toBeGreaterThanOrEqual(0);
    expect(s.start).toBeLessThanOrEqual(s.end);
    expect(s.end).toBeLessThanOrEqual(text.length);
  };
  expect(doc.text).toBe(text);
  let lastEnd = 0;
  for (const card of doc.cards) {
    inRange(card.span);
    // In order and not overlapping; comment lines inside a card lie within it.
    expect(card.span.start).toBeGreaterThanOrEqual(lastEnd);
    lastEnd = card.span.end;
    for (const c of card.comments ?? []) {
      expect(c.span.start).toBeGreaterThan(card.span.start);
      expect(c.span.end).toBeLessThan(card.span.end);
    }
    for (const t of card.tokens) {
      inRange(t.span);
      expect(text.slice(t.span.start, t.span.end)).toBe(t.text);
      expect(t.text.length).toBeGreaterThan(0);
      expect(t.span.start).toBeGreaterThanOrEqual(card.span.start);
      expect(t.span.end).toBeLessThanOrEqual(card.span.end);
    }
    if (card.kind === 'error') {
      inRange(card.errorSpan);
      expect(card.message.length).toBeGreaterThan(0);
      expect(doc.errors.some((e) => e.message === card.message && e.span.start === card.errorSpan.start)).toBe(true);
    }
  }
  for (const e of doc.errors) {
    inRange(e.span);
    expect(e.code).toMatch(/^[a-z]+(-[a-z]+)*$/);
    expect(e.message).toMatch(/[.]$/);
    expect(e.message).not.toMatch(/NaN|undefined|\[object/);
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

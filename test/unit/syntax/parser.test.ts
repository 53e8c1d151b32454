// Unit tests of the netlist parser: every card form, comments, continuations, expressions, error cards and their ranges.
//
// Expected readings follow the trade's netlist conventions as the README writes them down ("The netlist
// dialect"): title line, `*` comments, `;` and `$ ` end-of-line comments, `+` continuations,
// element letters and their fields (common practice, from memory). Where the conventions leave a
// choice open, the test says the reading is qpoint's own choice.

import { describe, expect, it } from 'vitest';
import { isKnownDotCommand, isNumberLike, parse, unquote } from '../../../shared-analysis/src/syntax/parser';
import type { Card, ParsedDocument, ParseOptions, Token } from '../../../shared-analysis/src/syntax/ast';

// ---------------------------------------------------------------------------
// Fixture notation. A line made only of `^` (after optional blanks), followed by a finding code,
// marks the range of that finding in the line above it; marker lines are removed before parsing:
//
//   Q1 1 2
//   ^^^^^^ element-missing-fields
//
// `check(netlist, expected)` parses the fixture and compares the card summaries and, when the
// fixture carries markers or `expected.codes` is given, the exact set of findings.

interface Expected {
  /** Summaries of every card in order (see `summarise`). */
  cards?: unknown[];
  /** Exact messages of the findings, in report order. */
  messages?: string[];
  options?: ParseOptions;
}

interface Fixture {
  text: string;
  marks: { code: string; start: number; end: number }[];
}

function fixture(source: string): Fixture {
  const real: string[] = [];
  const marks: Fixture['marks'] = [];
  let offset = 0;
  let prevStart = -1;
  for (const line of source.split('\n')) {
    const m = /^(\s*)(\^+)\s+([a-z][a-z-]*)\s*$/.exec(line);
    if (m && prevStart >= 0) {
      const start = prevStart + m[1].length;
      marks.push({ code: m[3], start, end: start + m[2].length });
      continue;
    }
    real.push(line);
    prevStart = offset;
    offset += line.length + 1;
  }
  return { text: real.join('\n'), marks };
}

function tokenText(t: Token | undefined): string | undefined {
  return t?.text;
}

/** A card reduced to its texts: tokens become their text, assignments `name=value`. */
function summarise(card: Card): unknown {
  const asg = (list: readonly { name: Token; value: Token }[]): string[] => list.map((a) => `${a.name.text}=${a.value.text}`);
  switch (card.kind) {
    case 'title':
    case 'comment':
      return { kind: card.kind, text: card.text };
    case 'element':
      return {
        kind: 'element',
        letter: card.letter,
        name: card.name.text,
        nodes: card.nodes.map((t) => t.text),
        value: tokenText(card.value),
        model: tokenText(card.model),
        area: tokenText(card.area),
        control: tokenText(card.control),
        subckt: tokenText(card.subckt),
        source: card.source && {
          form: card.source.form,
          value: tokenText(card.source.value),
          function: tokenText(card.source.function),
        },
        params: asg(card.params),
      };
    case 'model':
      return { kind: 'model', name: card.name.text, type: card.type.text, params: asg(card.params) };
    case 'param':
      return { kind: 'param', params: asg(card.params) };
    case 'subckt':
      return { kind: 'subckt', name: card.name.text, ports: card.ports.map((t) => t.text), params: asg(card.params) };
    case 'ends':
      return { kind: 'ends', name: tokenText(card.name) };
    case 'include':
      return { kind: 'include', path: tokenText(card.path) };
    case 'lib':
      return { kind: 'lib', path: tokenText(card.path), section: tokenText(card.section) };
    case 'endl':
      return { kind: 'endl', section: tokenText(card.section) };
    case 'temp':
      return { kind: 'temp', values: card.values.map((t) => t.text) };
    case 'option':
      return { kind: 'option', params: asg(card.params), flags: card.flags.map((t) => t.text) };
    case 'op':
    case 'end':
      return { kind: card.kind };
    case 'other-dot':
      return { kind: 'other-dot', command: card.command.text };
    case 'skipped':
      return { kind: 'skipped', command: card.command.text, group: card.group };
    case 'global':
      return { kind: 'global', nodes: card.nodes.map((t) => t.text) };
    case 'func':
      return { kind: 'func', name: card.name.text, args: card.args.map((t) => t.text), body: card.body?.text };
    case 'condition':
      return { kind: 'condition', branch: card.branch, condition: card.condition?.text };
    case 'error':
      return { kind: 'error', message: card.message };
  }
}

/** Structural promises that hold for every parse (spans in range, tokens slice back, cards ordered). */
function assertInvariants(doc: ParsedDocument): void {
  const { text } = doc;
  const inRange = (s: { start: number; end: number }): void => {
    expect(s.start).toBeGreaterThanOrEqual(0);
    expect(s.end).toBeGreaterThanOrEqual(s.start);
    expect(s.end).toBeLessThanOrEqual(text.length);
  };
  let prevEnd = 0;
  for (const card of doc.cards) {
    inRange(card.span);
    // Cards are in order and do not overlap.
    expect(card.span.start).toBeGreaterThanOrEqual(prevEnd);
    prevEnd = card.span.end;
    for (const c of card.comments ?? []) {
      expect(c.span.start).toBeGreaterThan(card.span.start);
      expect(c.span.end).toBeLessThan(card.span.end);
    }
    for (const t of card.tokens) {
      inRange(t.span);
      expect(text.slice(t.span.start, t.span.end)).toBe(t.text);
      expect(t.span.start).toBeGreaterThanOrEqual(card.span.start);
      expect(t.span.end).toBeLessThanOrEqual(card.span.end);
    }
    if (card.kind === 'error') inRange(card.errorSpan);
  }
  for (const e of doc.errors) inRange(e.span);
}

function check(source: string, expected: Expected): ParsedDocument {
  const { text, marks } = fixture(source);
  const doc = parse('test://fixture.cir', text, expected.options ?? { hasTitle: false });
  assertInvariants(doc);
  if (expected.cards) expect(doc.cards.map(summarise)).toEqual(expected.cards);
  const found = doc.errors.map((e) => ({ code: e.code, start: e.span.start, end: e.span.end }));
  const order = (a: { start: number; code: string }, b: { start: number; code: string }): number =>
    a.start - b.start || a.code.localeCompare(b.code);
  expect([...found].sort(order)).toEqual([...marks].sort(order));
  if (expected.messages) expect(doc.errors.map((e) => e.message)).toEqual(expected.messages);
  return doc;
}

/** The element summary with the fields a test does not mention left undefined. */
function el(fields: Record<string, unknown>): Record<string, unknown> {
  return { kind: 'element', params: [], nodes: [], ...fields };
}

// ---------------------------------------------------------------------------

describe('title line', () => {
  it('reads the first line as the title whatever it holds', () => {
    check('Bias chain for the sensor front end\nR1 a 0 1k', {
      options: { hasTitle: true },
      cards: [{ kind: 'title', text: 'Bias chain for the sensor front end' }, el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' })],
    });
  });

  it('gives a hint when the title reads like an element card', () => {
    const doc = check('R1 vcc out 4.7k\n^^^^^^^^^^^^^^^ title-looks-like-card\nQ1 out b 0 QN', {
      options: { hasTitle: true },
    });
    expect(doc.cards[0]).toMatchObject({ kind: 'title', text: 'R1 vcc out 4.7k' });
    expect(doc.errors[0].severity).toBe('hint');
  });

  it('gives a hint for an upper-case element name without a digit', () => {
    check('VCC vcc 0 5\n^^^^^^^^^^^ title-looks-like-card', { options: { hasTitle: true } });
  });

  it('gives a hint when the title reads like a dot card', () => {
    check('.model QN NPN (BF=120)\n^^^^^^^^^^^^^^^^^^^^^^ title-looks-like-card', { options: { hasTitle: true } });
  });

  // The hint's test for "reads like a card" is qpoint's own heuristic.
  it('gives no hint for ordinary prose even when it starts with an element letter', () => {
    // "Quick check ..." starts with Q and has enough words to fill a transistor card, but no field is numeric.
    check('Quick check of a Widlar source\nM1 d g 0 0 NM', { options: { hasTitle: true } });
    check('Mirror test 2\n', { options: { hasTitle: true } });
    // Five fields with numbers would fill a transconductance card, but "Generated" is not an element name.
    check('Generated bench netlist: 50,000 elements', { options: { hasTitle: true } });
  });

  it('gives no hint for an acronym-led title punctuated as prose, or whose would-be value is a word', () => {
    // "NPN" and "LDO" are card-like names (capitals) and a number follows, but a comma after a word is prose, and an
    // inductor card's value cannot be the word "V".
    check('NPN mirror, 5 V rail\nQ1 a a 0 QN', { options: { hasTitle: true } });
    check('NPN sink array, 20000 elements\nQ1 a a 0 QN', { options: { hasTitle: true } });
    check('LDO bias 3.3 V\nR1 a 0 1k', { options: { hasTitle: true } });
    // Commas between a source's points are inside its parentheses: still a card.
    check('V1 in 0 PWL(0 0, 1m 5)\n^^^^^^^^^^^^^^^^^^^^^^ title-looks-like-card', { options: { hasTitle: true } });
    check('RLOAD out 0 4.7k\n^^^^^^^^^^^^^^^^ title-looks-like-card', { options: { hasTitle: true } });
  });

  it('reads an empty first line as an empty title', () => {
    check('\nR1 a 0 1k', {
      options: { hasTitle: true },
      cards: [{ kind: 'title', text: '' }, el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' })],
    });
  });

  it('reads the first line as a card when the document has no title', () => {
    check('R1 a 0 1k', { cards: [el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' })] });
  });
});

describe('comments', () => {
  it('keeps * comment lines, indented or not, as comment cards', () => {
    check('* supply rails\n   * indented note\nR1 a 0 1k', {
      cards: [
        { kind: 'comment', text: 'supply rails' },
        { kind: 'comment', text: 'indented note' },
        el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' }),
      ],
    });
  });

  it('ends a card at ; and at $ followed by a blank or the line end', () => {
    check('R1 a 0 1k ; load resistor\nR2 b 0 2k $ second load\nR3 c 0 3k $\nR4 d 0 4k;tight', {
      cards: [
        el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' }),
        el({ letter: 'R', name: 'R2', nodes: ['b', '0'], value: '2k' }),
        el({ letter: 'R', name: 'R3', nodes: ['c', '0'], value: '3k' }),
        el({ letter: 'R', name: 'R4', nodes: ['d', '0'], value: '4k' }),
      ],
    });
  });

  it('keeps $ inside a word and ; or $ inside braces and quotes', () => {
    check("R1 n$1 0 {a;b}\nR2 x 0 '1k $ 2'\n.include \"odd;name $ here.lib\"", {
      cards: [
        el({ letter: 'R', name: 'R1', nodes: ['n$1', '0'], value: '{a;b}' }),
        el({ letter: 'R', name: 'R2', nodes: ['x', '0'], value: "'1k $ 2'" }),
        { kind: 'include', path: '"odd;name $ here.lib"' },
      ],
    });
  });

  it('includes the end-of-line comment in the card span', () => {
    const doc = check('R1 a 0 1k ; load', {});
    expect(doc.cards[0].span).toEqual({ start: 0, end: 16 });
  });
});

describe('continuation lines', () => {
  it('joins + lines to the card before them, across comments and blank lines', () => {
    const doc = check('.model QN NPN\n* beta from the data sheet\n\n+ (BF=150\n  + IS=2e-16)\nR1 a 0 1k', {
      cards: [
        { kind: 'model', name: 'QN', type: 'NPN', params: ['BF=150', 'IS=2e-16'] },
        el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' }),
      ],
    });
    const model = doc.cards[0];
    // The comment inside the card is kept with it, so cards never overlap.
    expect(model.comments?.map((c) => c.text)).toEqual(['beta from the data sheet']);
    // The card span runs from `.model` through the end of its last continuation line.
    expect(doc.text.slice(model.span.start, model.span.end)).toBe('.model QN NPN\n* beta from the data sheet\n\n+ (BF=150\n  + IS=2e-16)');
  });

  it('keeps a comment after the last continuation line as a card of its own', () => {
    const doc = check('R1 a 0 1k\n* between\n+ M=2\n* after\nR2 b 0 1k', {
      cards: [
        el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k', params: ['M=2'] }),
        { kind: 'comment', text: 'after' },
        el({ letter: 'R', name: 'R2', nodes: ['b', '0'], value: '1k' }),
      ],
    });
    expect(doc.cards[0].comments?.map((c) => c.text)).toEqual(['between']);
    expect(doc.cards[2].comments).toBeUndefined();
  });

  it('makes a + line with no card before it an error card', () => {
    check('* header\n+ 1k 2k\n^ continuation-without-card\nR1 a 0 1k', {
      cards: [
        { kind: 'comment', text: 'header' },
        { kind: 'error', message: "Continuation line with no card to continue: a '+' line must follow an element or dot card." },
        el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' }),
      ],
    });
  });

  it('does not continue the title', () => {
    check('Title line\n+ more\n^ continuation-without-card', { options: { hasTitle: true } });
  });

  it('reads a document made only of + signs without failing', () => {
    check('+\n^ continuation-without-card\n+\n++', { cards: [{ kind: 'error', message: expect.any(String) }] });
  });
});

describe('letters, case and assignments', () => {
  it('reads letters and dot commands in any case and keeps the original text', () => {
    const doc = check('q1 C B E qn\n.MODEL qn npn (bf=90)\n.Param Vdd=5', {
      cards: [
        el({ letter: 'Q', name: 'q1', nodes: ['C', 'B', 'E'], model: 'qn' }),
        { kind: 'model', name: 'qn', type: 'npn', params: ['bf=90'] },
        { kind: 'param', params: ['Vdd=5'] },
      ],
    });
    expect(doc.cards[0].tokens.map((t) => t.text)).toEqual(['q1', 'C', 'B', 'E', 'qn']);
  });

  it('forms an assignment with or without blanks around =', () => {
    check('M1 d g s b NM W = 2u L=1u M =2 AD= 4p', {
      cards: [el({ letter: 'M', name: 'M1', nodes: ['d', 'g', 's', 'b'], model: 'NM', params: ['W=2u', 'L=1u', 'M=2', 'AD=4p'] })],
    });
  });

  it('reports an assignment with no value and keeps reading the card', () => {
    check('M1 d g s b NM W= L=1u\n              ^^ assignment-missing-value', {
      cards: [el({ letter: 'M', name: 'M1', nodes: ['d', 'g', 's', 'b'], model: 'NM', params: ['L=1u'] })],
      messages: ["'W=' has no value after the '='; write W=<value>."],
    });
    check('.param a=\n       ^^ assignment-missing-value', {});
  });

  it('reports an = with no name', () => {
    check('.param =5 b=2\n       ^ assignment-missing-name', { cards: [{ kind: 'param', params: ['b=2'] }] });
  });

  it('splits fields at commas', () => {
    check('.model D1N DIODE(IS=1e-14,N=1.05,RS=0.5)', {
      cards: [{ kind: 'model', name: 'D1N', type: 'DIODE', params: ['IS=1e-14', 'N=1.05', 'RS=0.5'] }],
    });
  });
});

describe('expressions', () => {
  it('keeps a braced expression with nested braces as one expr token', () => {
    const doc = check('R1 a 0 {rbase*{scale}+1k} M={ {2} }', {
      cards: [el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '{rbase*{scale}+1k}', params: ['M={ {2} }'] })],
    });
    const card = doc.cards[0];
    expect(card.kind === 'element' && card.value?.kind).toBe('expr');
  });

  it("keeps a quoted '...' expression with blanks as one expr token", () => {
    const doc = check(".param ratio = 'wout / wref'", { cards: [{ kind: 'param', params: ["ratio='wout / wref'"] }] });
    const p = doc.cards[0];
    expect(p.kind === 'param' && p.params[0].value.kind).toBe('expr');
  });

  it('reports an unclosed brace and runs the expression to the line end', () => {
    check('R1 a 0 {1k*(2+3)\n       ^^^^^^^^^ unbalanced-brace\nR2 b 0 2k', {
      cards: [
        el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '{1k*(2+3)' }),
        el({ letter: 'R', name: 'R2', nodes: ['b', '0'], value: '2k' }),
      ],
    });
  });

  it('reports a stray closing brace', () => {
    check('R1 a 0 1k}\n         ^ unbalanced-brace', { cards: [el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' })] });
  });

  it('reports an unterminated quote', () => {
    check(".include \"models/npn.lib\n         ^^^^^^^^^^^^^^^ unterminated-quote", {
      cards: [{ kind: 'include', path: '"models/npn.lib' }],
    });
  });
});

describe('R, C and L', () => {
  it('reads two nodes, a value and extra assignments', () => {
    check('R1 vcc ref 10k M=2 TC=0.001\nC1 ref 0 100n IC=0\nL1 in out 10u', {
      cards: [
        el({ letter: 'R', name: 'R1', nodes: ['vcc', 'ref'], value: '10k', params: ['M=2', 'TC=0.001'] }),
        el({ letter: 'C', name: 'C1', nodes: ['ref', '0'], value: '100n', params: ['IC=0'] }),
        el({ letter: 'L', name: 'L1', nodes: ['in', 'out'], value: '10u' }),
      ],
    });
  });

  it('tells a resistor model from its value', () => {
    check('R1 a b RPOLY 2k\nR2 a b 2k RPOLY\nR3 a b RPOLY L=10u W=1u', {
      cards: [
        el({ letter: 'R', name: 'R1', nodes: ['a', 'b'], value: '2k', model: 'RPOLY' }),
        el({ letter: 'R', name: 'R2', nodes: ['a', 'b'], value: '2k', model: 'RPOLY' }),
        el({ letter: 'R', name: 'R3', nodes: ['a', 'b'], model: 'RPOLY', params: ['L=10u', 'W=1u'] }),
      ],
    });
  });

  it('accepts the value written as an assignment named after the letter', () => {
    check('R1 a b R=4.7k', { cards: [el({ letter: 'R', name: 'R1', nodes: ['a', 'b'], value: '4.7k' })] });
  });

  it('makes a resistor without a value an error card, then reads the next card', () => {
    check('R1 a 0\n^^^^^^ element-missing-fields\nC1 a 0 1u', {
      cards: [
        { kind: 'error', message: 'R1: a resistor needs two nodes and a value; found 2 fields.' },
        el({ letter: 'C', name: 'C1', nodes: ['a', '0'], value: '1u' }),
      ],
    });
  });

  it('counts positional fields and parameters apart in the message', () => {
    check('R1 a 0 M=2\n^^^^^^^^^^ element-missing-fields', {
      messages: ['R1: a resistor needs two nodes and a value; found 2 fields and 1 name=value parameter.'],
    });
  });

  it('warns about an extra positional field', () => {
    check('C1 a 0 1u 2u\n          ^^ unexpected-field', { cards: [el({ letter: 'C', name: 'C1', nodes: ['a', '0'], value: '1u' })] });
  });
});

describe('independent sources', () => {
  it('reads DC, bare and DC-with-AC values', () => {
    check('V1 vcc 0 DC 5\nV2 vee 0 -5\nI1 0 ref dc 100u ac 1 0\nV3 x 0 AC 1 DC {vdd}', {
      cards: [
        el({ letter: 'V', name: 'V1', nodes: ['vcc', '0'], source: { form: 'dc', value: '5' } }),
        el({ letter: 'V', name: 'V2', nodes: ['vee', '0'], source: { form: 'bare', value: '-5' } }),
        el({ letter: 'I', name: 'I1', nodes: ['0', 'ref'], source: { form: 'dc', value: '100u' } }),
        el({ letter: 'V', name: 'V3', nodes: ['x', '0'], source: { form: 'dc', value: '{vdd}' } }),
      ],
    });
  });

  it('records the t=0 value of each transient function', () => {
    // PULSE and EXP start at their first argument (the initial value); SIN starts at its offset,
    // its first argument; PWL starts at the value of its first (time, value) pair
    // (common practice for transient source functions, from memory).
    check(
      [
        'V1 a 0 PULSE(0.2 5 1n 1n 1n 10n 20n)',
        'V2 b 0 SIN(2.5 1 1k)',
        'V3 c 0 EXP ( -1 1 2n 30n 60n 40n )',
        'V4 d 0 PWL(0 1.8 1u 3.3)',
        'I5 e 0 pwl (0n, 20u) (1u, 40u)',
        'V6 f 0 PULSE 0 3.3 0 1n 1n 5n 10n',
      ].join('\n'),
      {
        cards: [
          el({ letter: 'V', name: 'V1', nodes: ['a', '0'], source: { form: 'transient', value: '0.2', function: 'PULSE' } }),
          el({ letter: 'V', name: 'V2', nodes: ['b', '0'], source: { form: 'transient', value: '2.5', function: 'SIN' } }),
          el({ letter: 'V', name: 'V3', nodes: ['c', '0'], source: { form: 'transient', value: '-1', function: 'EXP' } }),
          el({ letter: 'V', name: 'V4', nodes: ['d', '0'], source: { form: 'transient', value: '1.8', function: 'PWL' } }),
          el({ letter: 'I', name: 'I5', nodes: ['e', '0'], source: { form: 'transient', value: '20u', function: 'pwl' } }),
          el({ letter: 'V', name: 'V6', nodes: ['f', '0'], source: { form: 'transient', value: '0', function: 'PULSE' } }),
        ],
      },
    );
  });

  it('reads DC written as an assignment', () => {
    check('V1 a 0 DC=1.8', { cards: [el({ letter: 'V', name: 'V1', nodes: ['a', '0'], source: { form: 'dc', value: '1.8' } })] });
  });

  it('prefers an explicit DC value over the transient function', () => {
    check('V1 a 0 DC 1.2 SIN(0 1 1k)', { cards: [el({ letter: 'V', name: 'V1', nodes: ['a', '0'], source: { form: 'dc', value: '1.2' } })] });
  });

  it('uses the DC value when a bare value is also given, and says so', () => {
    check('I1 a 0 1m DC 2m\n       ^^ unexpected-field', {
      cards: [el({ letter: 'I', name: 'I1', nodes: ['a', '0'], source: { form: 'dc', value: '2m' } })],
      messages: ["I1: '1m' and DC 2m both give the DC value; DC 2m is used and '1m' is ignored."],
    });
  });

  it('reads a source with no value, leaving the value undefined', () => {
    check('V1 a 0\nI2 b 0 AC 1', {
      cards: [
        el({ letter: 'V', name: 'V1', nodes: ['a', '0'], source: { form: 'bare' } }),
        // Only an AC specification: the DC value is 0 (README, "The netlist dialect"; common practice).
        el({ letter: 'I', name: 'I2', nodes: ['b', '0'], source: { form: 'none' } }),
      ],
    });
  });

  it('reads a source with only another analysis function as having no DC value', () => {
    check('V1 a 0 TRNOISE(1n 1p 0 0)\nV2 b 0 DC 1 TRNOISE(1n 1p)', {
      cards: [
        el({ letter: 'V', name: 'V1', nodes: ['a', '0'], source: { form: 'none' } }),
        el({ letter: 'V', name: 'V2', nodes: ['b', '0'], source: { form: 'dc', value: '1' } }),
      ],
    });
  });

  it('reports DC without a value and a transient function without arguments', () => {
    check('V1 a 0 DC\n       ^^ source-missing-value\nV2 b 0 PWL()\n       ^^^ source-missing-value', {
      cards: [
        el({ letter: 'V', name: 'V1', nodes: ['a', '0'], source: { form: 'dc' } }),
        el({ letter: 'V', name: 'V2', nodes: ['b', '0'], source: { form: 'transient', function: 'PWL' } }),
      ],
      messages: ["V1: 'DC' needs a value after it (DC 5).", "V2: PWL(...) needs a first (time, value) pair to give the source's value at t=0."],
    });
  });

  it('rejects forms it does not read with a message naming the form', () => {
    // SFFM(VO VA FC MDI FS) is VO + VA·sin(...) with sin(0) = 0, so its t=0 value is its offset (from memory).
    check('V1 a 0 SFFM(0.5 1 1k 5 100)\nV2 b 0 PWL(FILE "ramp.txt")\n           ^^^^ unsupported-source-form\nV3 c 0 1\nV4 d 0 POLY(1) e 0 1\n       ^^^^ unsupported-source-form', {
      cards: [
        el({ letter: 'V', name: 'V1', nodes: ['a', '0'], source: { form: 'transient', value: '0.5', function: 'SFFM' } }),
        { kind: 'error', message: expect.stringContaining("PWL reads its points from the card only ('FILE' is not a time)") },
        el({ letter: 'V', name: 'V3', nodes: ['c', '0'], source: { form: 'bare', value: '1' } }),
        {
          kind: 'error',
          message:
            'V4: the POLY(...) form is not supported; a voltage source is read as two nodes and DC <value>, a bare <value>, or PULSE(...), SIN(...), EXP(...) or PWL(...) for its t=0 value.',
        },
      ],
    });
  });

  it('needs two nodes', () => {
    check('V1 vcc\n^^^^^^ element-missing-fields', {
      messages: ['V1: a voltage source needs a positive and a negative node; found 1 field.'],
    });
  });
});

describe('controlled sources', () => {
  it('reads E and G with four nodes and a gain, F and H with a controlling source', () => {
    check('E1 out 0 inp inn 1e5\nG1 0 out ctl 0 2m\nF1 0 out VSENSE 2\nH1 out 0 VSENSE 1k', {
      cards: [
        el({ letter: 'E', name: 'E1', nodes: ['out', '0', 'inp', 'inn'], value: '1e5' }),
        el({ letter: 'G', name: 'G1', nodes: ['0', 'out', 'ctl', '0'], value: '2m' }),
        el({ letter: 'F', name: 'F1', nodes: ['0', 'out'], control: 'VSENSE', value: '2' }),
        el({ letter: 'H', name: 'H1', nodes: ['out', '0'], control: 'VSENSE', value: '1k' }),
      ],
    });
  });

  it('allows nodes whose names are also form keywords', () => {
    check('E1 out 0 freq value 10', { cards: [el({ letter: 'E', name: 'E1', nodes: ['out', '0', 'freq', 'value'], value: '10' })] });
  });

  it('reads POLY, VALUE= and TABLE forms into a behaviour for a later solver', () => {
    const doc = check('E1 out 0 POLY(1) in 0 0 1\nG2 out 0 VALUE={V(in)*2m}\nE3 out 0 TABLE {V(in)} (0,0) (1,2)\nF4 0 out POLY(2) V1 V2 0 1 1', {});
    const forms = doc.cards.map((c) => (c.kind === 'element' ? [c.name.text, c.nodes.map((t) => t.text), c.behaviour?.form, c.behaviour?.keyword.text, c.behaviour?.fields.map((t) => t.text)] : c.kind));
    expect(forms).toEqual([
      ['E1', ['out', '0'], 'POLY', 'POLY', ['POLY', '1', 'in', '0', '0', '1']],
      ['G2', ['out', '0'], 'VALUE', 'VALUE', ['VALUE', '{V(in)*2m}']],
      ['E3', ['out', '0'], 'TABLE', 'TABLE', ['TABLE', '{V(in)}', '0', '0', '1', '2']],
      ['F4', ['0', 'out'], 'POLY', 'POLY', ['POLY', '2', 'V1', 'V2', '0', '1', '1']],
    ]);
    const g2 = doc.cards[1]!;
    if (g2.kind !== 'element' || !g2.behaviour) throw new Error('G2 not read');
    expect(doc.text.slice(g2.behaviour.span.start, g2.behaviour.span.end)).toBe('VALUE={V(in)*2m}');
  });

  it('counts the fields of a short controlled source', () => {
    check('F1 0 out VSENSE\n^^^^^^^^^^^^^^^ element-missing-fields', {
      messages: ['F1: a current-controlled current source needs two output nodes, the name of the controlling voltage source and a gain; found 3 fields.'],
    });
  });
});

describe('diodes and bipolar transistors', () => {
  it('reads a diode with and without area', () => {
    check('D1 a k DREF\nD2 a k DREF 4', {
      cards: [
        el({ letter: 'D', name: 'D1', nodes: ['a', 'k'], model: 'DREF' }),
        el({ letter: 'D', name: 'D2', nodes: ['a', 'k'], model: 'DREF', area: '4' }),
      ],
    });
  });

  it('reports a number where the diode model belongs', () => {
    check('D1 a k 2\n       ^ missing-model-name', {
      messages: ["D1: a diode needs anode and cathode nodes and a model name; the third field '2' is a number, not a model name."],
    });
  });

  // qpoint's choice where the conventions are ambiguous: the model is the last non-numeric field after
  // the emitter, a field between emitter and model is the substrate, a number after the model the area.
  it('tells substrate from area by position and the model name', () => {
    check(
      [
        'Q1 c b e QN',
        'Q2 c b e sub QN',
        'Q3 3 2 0 QN 2',
        'Q4 3 2 0 4 QN 2',
        'Q5 3 2 0 0 QP',
        'Q6 out ref 0 QN {m}',
      ].join('\n'),
      {
        cards: [
          el({ letter: 'Q', name: 'Q1', nodes: ['c', 'b', 'e'], model: 'QN' }),
          el({ letter: 'Q', name: 'Q2', nodes: ['c', 'b', 'e', 'sub'], model: 'QN' }),
          el({ letter: 'Q', name: 'Q3', nodes: ['3', '2', '0'], model: 'QN', area: '2' }),
          el({ letter: 'Q', name: 'Q4', nodes: ['3', '2', '0', '4'], model: 'QN', area: '2' }),
          el({ letter: 'Q', name: 'Q5', nodes: ['3', '2', '0', '0'], model: 'QP' }),
          el({ letter: 'Q', name: 'Q6', nodes: ['out', 'ref', '0'], model: 'QN', area: '{m}' }),
        ],
      },
    );
  });

  it('counts the fields of a short transistor card', () => {
    check('Q1 1 2\n^^^^^^ element-missing-fields\nQ2 c b e QN', {
      cards: [
        { kind: 'error', message: 'Q1: a bipolar transistor needs collector, base and emitter nodes and a model name; found 2 fields.' },
        el({ letter: 'Q', name: 'Q2', nodes: ['c', 'b', 'e'], model: 'QN' }),
      ],
    });
  });

  it('reports a transistor whose fields after the emitter are all numbers', () => {
    check('Q1 3 2 0 4 2\n         ^^^ missing-model-name', {
      messages: [
        "Q1: a bipolar transistor needs collector, base and emitter nodes and a model name; none of the fields after the emitter node '0' is a model name (a model name starts with a letter).",
      ],
    });
  });

  it('ignores OFF with a hint', () => {
    check('Q1 c b e QN OFF\n            ^^^ ignored-keyword', { cards: [el({ letter: 'Q', name: 'Q1', nodes: ['c', 'b', 'e'], model: 'QN' })] });
  });
});

describe('MOSFETs and subcircuit instances', () => {
  it('reads four nodes, the model and the sizes', () => {
    check('M1 out ref 0 0 NCH W=10u L=2u M=4', {
      cards: [el({ letter: 'M', name: 'M1', nodes: ['out', 'ref', '0', '0'], model: 'NCH', params: ['W=10u', 'L=2u', 'M=4'] })],
    });
  });

  it('counts the fields of a three-terminal MOSFET card', () => {
    check('M1 d g s NCH\n^^^^^^^^^^^^ element-missing-fields', {
      messages: ['M1: a MOSFET needs drain, gate, source and bulk nodes and a model name; found 4 fields.'],
    });
  });

  it('reports a number where the MOSFET model belongs', () => {
    check('M1 d g s b 10u\n           ^^^ missing-model-name', {});
  });

  it('reads nodes, subcircuit name and parameters, with or without PARAMS:', () => {
    check('X1 in out bias MIRROR\nX2 a b MIRROR PARAMS: ratio=2 wout={w*2}\nX3 a b MIRROR params:ratio=3\nXLONE CELL', {
      cards: [
        el({ letter: 'X', name: 'X1', nodes: ['in', 'out', 'bias'], subckt: 'MIRROR' }),
        el({ letter: 'X', name: 'X2', nodes: ['a', 'b'], subckt: 'MIRROR', params: ['ratio=2', 'wout={w*2}'] }),
        el({ letter: 'X', name: 'X3', nodes: ['a', 'b'], subckt: 'MIRROR', params: ['ratio=3'] }),
        el({ letter: 'X', name: 'XLONE', nodes: [], subckt: 'CELL' }),
      ],
    });
  });

  it('warns about a positional field after the instance parameters', () => {
    check('X1 a b MIRROR ratio=2 stray\n                      ^^^^^ unexpected-field', {});
  });
});

describe('element letters', () => {
  // Field orders of the letters the solver does not read yet follow the family's conventions (common practice, from memory).
  it('reads the letters the solver does not solve yet into cards with their fields', () => {
    const doc = check(
      'K1 L1 L2 0.99\nJ1 d g s JMOD 2\nS1 a b c 0 SWMOD OFF\nW1 a b VSENSE WMOD\nB1 out 0 V={V(in)*2}\nT1 a 0 b 0 Z0=50 TD=1n\nU1 in out DGATE\nR1 a 0 1k',
      {},
    );
    const read = doc.cards.map((c) =>
      c.kind === 'element'
        ? { letter: c.letter, nodes: c.nodes.map((t) => t.text), model: c.model?.text, value: c.value?.text, control: c.control?.text, area: c.area?.text, coupled: c.coupled?.map((t) => t.text) }
        : c.kind,
    );
    expect(read).toEqual([
      { letter: 'K', nodes: [], model: undefined, value: '0.99', control: undefined, area: undefined, coupled: ['L1', 'L2'] },
      { letter: 'J', nodes: ['d', 'g', 's'], model: 'JMOD', value: undefined, control: undefined, area: '2', coupled: undefined },
      { letter: 'S', nodes: ['a', 'b', 'c', '0'], model: 'SWMOD', value: undefined, control: undefined, area: undefined, coupled: undefined },
      { letter: 'W', nodes: ['a', 'b'], model: 'WMOD', value: undefined, control: 'VSENSE', area: undefined, coupled: undefined },
      { letter: 'B', nodes: ['out', '0'], model: undefined, value: '{V(in)*2}', control: undefined, area: undefined, coupled: undefined },
      { letter: 'T', nodes: ['a', '0', 'b', '0'], model: undefined, value: undefined, control: undefined, area: undefined, coupled: undefined },
      { letter: 'U', nodes: ['in', 'out'], model: 'DGATE', value: undefined, control: undefined, area: undefined, coupled: undefined },
      { letter: 'R', nodes: ['a', '0'], model: undefined, value: '1k', control: undefined, area: undefined, coupled: undefined },
    ]);
  });

  it('reports a too-short card of a letter the solver does not read yet', () => {
    check('J1 d g\n^^^^^^ element-missing-fields\nK1 L1 0.9\n^^^^^^^^^ element-missing-fields', {});
  });

  it('rejects a card that starts with neither a letter nor a dot', () => {
    check('10k a b\n^^^ unrecognised-card\n{x} 1 2\n^^^ unrecognised-card\n= 4\n^ assignment-missing-name\n^ unrecognised-card', {});
  });
});

describe('.model', () => {
  it('reads the name, type and parameters in every layout', () => {
    check(
      [
        '.model QN NPN (IS=1e-16 BF=100 VAF=80)',
        '.model QP PNP(IS=2e-16,BF=50)',
        '.model NCH NMOS KP=120u VTO=0.45 LAMBDA=0.02',
        '.model DREF D',
        '.model QW NPN',
        '+ (BF=200',
        '+  VAF = 60 )',
      ].join('\n'),
      {
        cards: [
          { kind: 'model', name: 'QN', type: 'NPN', params: ['IS=1e-16', 'BF=100', 'VAF=80'] },
          { kind: 'model', name: 'QP', type: 'PNP', params: ['IS=2e-16', 'BF=50'] },
          { kind: 'model', name: 'NCH', type: 'NMOS', params: ['KP=120u', 'VTO=0.45', 'LAMBDA=0.02'] },
          { kind: 'model', name: 'DREF', type: 'D', params: [] },
          { kind: 'model', name: 'QW', type: 'NPN', params: ['BF=200', 'VAF=60'] },
        ],
      },
    );
  });

  it('makes a model without a type an error card', () => {
    check('.model QN\n^^^^^^^^^ model-missing-fields', {
      messages: ['.model needs a model name and a device type (NPN, PNP, D, NMOS, PMOS); found 1 field.'],
    });
  });

  it('reports a model parameter without a value', () => {
    check('.model QN NPN (IS=1e-16 BF)\n                        ^^ assignment-missing-value', {
      cards: [{ kind: 'model', name: 'QN', type: 'NPN', params: ['IS=1e-16'] }],
      messages: [".model QN: parameter 'BF' has no value; write BF=<value>."],
    });
  });

  it('warns about an unclosed parameter list', () => {
    check('.model QN NPN (BF=100\n              ^ unbalanced-parenthesis', {
      cards: [{ kind: 'model', name: 'QN', type: 'NPN', params: ['BF=100'] }],
    });
  });
});

describe('.param, .temp, .option, .op and other dot cards', () => {
  it('reads several assignments per .param card', () => {
    check('.param vdd=3.3 rref={vdd/100u} ratio = 4', { cards: [{ kind: 'param', params: ['vdd=3.3', 'rref={vdd/100u}', 'ratio=4'] }] });
  });

  it('reports a .param field with no value', () => {
    check('.param vdd\n       ^^^ param-missing-assignment\n.param\n^^^^^^ param-missing-assignment', {});
  });

  it('reads .temp values', () => {
    check('.temp 27 85 -40\n.temp\n^^^^^ temp-missing-value', {
      cards: [
        { kind: 'temp', values: ['27', '85', '-40'] },
        { kind: 'temp', values: [] },
      ],
    });
  });

  it('reads .option and .options assignments and flags', () => {
    check('.option tnom=25 quiet\n.OPTIONS gmin=1e-12', {
      cards: [
        { kind: 'option', params: ['tnom=25'], flags: ['quiet'] },
        { kind: 'option', params: ['gmin=1e-12'], flags: [] },
      ],
    });
  });

  it('reads .op and keeps other dot cards', () => {
    check('.op\n.tran 1n 1u\n.print dc v(out)', {
      cards: [{ kind: 'op' }, { kind: 'skipped', command: '.tran', group: 'analysis' }, { kind: 'skipped', command: '.print', group: 'output' }],
    });
  });

  it('rejects a lone dot', () => {
    check('. model\n^ unrecognised-card', {});
  });
});

describe('.subckt and .ends', () => {
  it('reads the header, the body and the closing card', () => {
    check('.subckt MIRROR in out vee PARAMS: ratio=1\nQ1 in in vee QN\nQ2 out in vee QN {ratio}\n.ends MIRROR', {
      cards: [
        { kind: 'subckt', name: 'MIRROR', ports: ['in', 'out', 'vee'], params: ['ratio=1'] },
        el({ letter: 'Q', name: 'Q1', nodes: ['in', 'in', 'vee'], model: 'QN' }),
        el({ letter: 'Q', name: 'Q2', nodes: ['out', 'in', 'vee'], model: 'QN', area: '{ratio}' }),
        { kind: 'ends', name: 'MIRROR' },
      ],
    });
  });

  it('reads parameters without the PARAMS: keyword and nested definitions', () => {
    check('.subckt OUTER a b w=2\n.subckt INNER x\n.ends\n.ends outer', {
      cards: [
        { kind: 'subckt', name: 'OUTER', ports: ['a', 'b'], params: ['w=2'] },
        { kind: 'subckt', name: 'INNER', ports: ['x'], params: [] },
        { kind: 'ends' },
        { kind: 'ends', name: 'outer' },
      ],
    });
  });

  it('reports a .subckt that is never closed at its own card', () => {
    check('R0 a 0 1\n.subckt CELL a b\n^^^^^^^^^^^^^^^^ subckt-missing-ends\nR1 a b 1k', {
      messages: ["Subcircuit 'CELL' is never closed: add '.ends CELL' after its last card."],
    });
  });

  it('reports .ends without .subckt and a mismatched name', () => {
    check('.ends\n^^^^^ ends-without-subckt\n.subckt A x\n.ends B\n      ^ ends-name-mismatch', {});
  });

  it('makes a header without a name an error card', () => {
    check('.subckt\n^^^^^^^ subckt-missing-name', {});
  });
});

describe('.include and .lib', () => {
  it('reads quoted and bare paths, keeping commas and = in bare paths', () => {
    check('.include "models/bjt.lib"\n.inc ../lib/npn,v2.mod\n.include\n^^^^^^^^ include-missing-path', {
      cards: [
        { kind: 'include', path: '"models/bjt.lib"' },
        { kind: 'include', path: '../lib/npn,v2.mod' },
        { kind: 'include' },
      ],
    });
  });

  it('reports .include without a path', () => {
    check('.include ; nothing\n^^^^^^^^ include-missing-path', {});
  });

  it('reads .lib with path and section, a lone section, a lone quoted path and .endl in a library file', () => {
    check(".lib 'corners.lib' slow\n.lib fast\n.lib \"whole.lib\"\n.endl fast\n.endl\n^^^^^ endl-without-lib-section\n.lib\n^^^^ lib-missing-fields", {
      cards: [
        { kind: 'lib', path: "'corners.lib'", section: 'slow' },
        { kind: 'lib', section: 'fast' },
        { kind: 'lib', path: '"whole.lib"' },
        { kind: 'endl', section: 'fast' },
        { kind: 'endl' },
        { kind: 'lib' },
      ],
    });
  });

  // qpoint's choice: a lone bare field starts a section only inside a library file.
  it('reads a lone bare .lib field as a path in a top-level netlist', () => {
    check('Top level\n.lib models/bjt.lib', {
      options: { hasTitle: true },
      cards: [{ kind: 'title', text: 'Top level' }, { kind: 'lib', path: 'models/bjt.lib' }],
    });
  });

  it('reports an unclosed library section at its .lib card and a mismatched .endl', () => {
    check('.lib typ\n.model QN NPN\n.endl slow\n      ^^^^ endl-name-mismatch\n.lib fast\n^^^^^^^^^ lib-section-missing-endl\nR1 a 0 1k', {});
  });
});

describe('.end', () => {
  it('stops reading at .end and hints at the text after it', () => {
    check('R1 a 0 1k\n.END\nR2 b 0 2k\n^^^^^^^^^ text-after-end', {
      cards: [el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' }), { kind: 'end' }],
    });
  });

  it('gives no hint when only blank lines follow', () => {
    check('R1 a 0 1k\n.end\n\n   \n', {});
  });

  it('still closes the subcircuit check at .end', () => {
    check('.subckt A x\n^^^^^^^^^^^ subckt-missing-ends\n.end', {});
  });

  it('does not take .ends or .endl for .end', () => {
    check('.subckt A x\n.ends\n.lib s\n.endl s\nR1 a 0 1', { cards: [expect.anything(), expect.anything(), expect.anything(), expect.anything(), expect.anything()] });
  });
});

describe('.end as a title and with a comment', () => {
  it('does not stop at a title that reads .end', () => {
    check('.end\n^^^^ title-looks-like-card\nR1 a 0 1k', {
      options: { hasTitle: true },
      cards: [{ kind: 'title', text: '.end' }, el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' })],
    });
  });

  it('stops at .end followed by an end-of-line comment', () => {
    check('.end ; finished\nR1 a 0 1k\n^^^^^^^^^ text-after-end', { cards: [{ kind: 'end' }] });
  });
});

describe('problem flood', () => {
  // The limit of 25 listed problems per card is qpoint's own choice.
  it('lists at most 25 problems per card and says so', () => {
    const doc = parse('flood.cir', '.param ' + '= '.repeat(40) + '\n.param x', { hasTitle: false });
    const codes = doc.errors.map((e) => e.code);
    expect(codes.filter((c) => c === 'assignment-missing-name')).toHaveLength(25);
    expect(codes.filter((c) => c === 'too-many-problems')).toHaveLength(1);
    // The next card gets its own allowance.
    expect(codes[codes.length - 1]).toBe('param-missing-assignment');
  });

  it('always lists the message of an error card', () => {
    const doc = parse('flood.cir', 'Q1 ' + '} '.repeat(40), { hasTitle: false });
    expect(doc.cards[0].kind).toBe('error');
    expect(doc.errors.map((e) => e.code).slice(-2)).toEqual(['too-many-problems', 'element-missing-fields']);
  });
});

describe('token helpers', () => {
  const word = (text: string, kind: 'word' | 'expr' = 'word') => ({ text, kind, span: { start: 0, end: text.length } });

  it('tells values from names', () => {
    // Numbers start with a digit, or a sign or point followed by one (common practice for netlist values).
    for (const v of ['0', '10k', '-5', '+3.3', '.5', '-.25', '1e-15']) expect(isNumberLike(word(v)), v).toBe(true);
    for (const v of ['QN', 'vcc', '-', '.', '+x', 'n1']) expect(isNumberLike(word(v)), v).toBe(false);
    expect(isNumberLike(word('{w*2}', 'expr'))).toBe(true);
  });

  it('knows the dot commands it interprets, in any case', () => {
    for (const c of ['.model', '.PARAM', '.Subckt', '.ends', '.include', '.inc', '.lib', '.endl', '.temp', '.option', '.options', '.op', '.end']) {
      expect(isKnownDotCommand(c), c).toBe(true);
    }
    for (const c of ['.tran', '.print', 'model', '.']) expect(isKnownDotCommand(c), c).toBe(false);
  });

  it('strips matching quotes only', () => {
    expect(unquote(word('"models/a.lib"'))).toBe('models/a.lib');
    expect(unquote(word("'b.lib'"))).toBe('b.lib');
    expect(unquote(word('"open.lib'))).toBe('"open.lib');
    expect(unquote(word('plain.lib'))).toBe('plain.lib');
    expect(unquote(word('"'))).toBe('"');
  });
});

describe('spans', () => {
  it('gives every token the span of its text and every card its lines', () => {
    const doc = check('R1 a 0 1k\r\nQ1 c b e QN\r\n+ 2\r\n', {});
    expect(doc.cards.map((c) => doc.text.slice(c.span.start, c.span.end))).toEqual(['R1 a 0 1k', 'Q1 c b e QN\r\n+ 2']);
  });

  it('reads lone carriage returns as line breaks', () => {
    check('R1 a 0 1k\rR2 b 0 2k\r+ M=2', {
      cards: [
        el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' }),
        el({ letter: 'R', name: 'R2', nodes: ['b', '0'], value: '2k', params: ['M=2'] }),
      ],
    });
  });

  it('counts offsets in UTF-16 code units past astral characters', () => {
    const doc = check('* gain 𝛃 = 100\nR1 a 0 1k', {});
    const r = doc.cards[1];
    // "* gain 𝛃 = 100\n" is 15 code units (the astral character takes two).
    expect(r.span.start).toBe(16);
  });
});

describe('recovery', () => {
  it('reads every good card between bad ones', () => {
    check('Q1 1\n^^^^ element-missing-fields\nR1 a 0 1k\nQ9 a b\n^^^^^^ element-missing-fields\n.model\n^^^^^^ model-missing-fields\nR2 b 0 2k', {
      cards: [
        { kind: 'error', message: expect.any(String) },
        el({ letter: 'R', name: 'R1', nodes: ['a', '0'], value: '1k' }),
        { kind: 'error', message: expect.any(String) },
        { kind: 'error', message: expect.any(String) },
        el({ letter: 'R', name: 'R2', nodes: ['b', '0'], value: '2k' }),
      ],
    });
  });
});

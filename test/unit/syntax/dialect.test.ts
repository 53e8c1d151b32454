// Parser tests for the netlist dialect as people keep it: skipped cards and blocks, comment forms,
// conditionals, user functions, .global, .title, .alter and names that start with a digit.
//
// The readings follow the family's netlist conventions as the README's dialect section writes them down
// (common practice, from memory). Where a convention leaves a choice open, the test
// says the reading is qpoint's own.

import { describe, expect, it } from 'vitest';
import { parse, startsWithDefinitionCard } from '../../../shared-analysis/src/syntax/parser';
import type { Card, ParsedDocument } from '../../../shared-analysis/src/syntax/ast';

function read(text: string, hasTitle = true): ParsedDocument {
  return parse('test://dialect.cir', text, { hasTitle });
}

/** Each card as `kind` plus the text that identifies it. */
function shape(doc: ParsedDocument): string[] {
  return doc.cards.map((c: Card) => {
    switch (c.kind) {
      case 'element':
        return `element ${c.name.text}`;
      case 'skipped':
        return `skipped ${c.group} ${c.command.text}`;
      case 'comment':
        return `comment ${c.text}`;
      case 'condition':
        return `condition ${c.branch}${c.condition ? ` ${c.condition.text}` : ''}`;
      case 'other-dot':
        return `other-dot ${c.command.text}`;
      default:
        return c.kind;
    }
  });
}

const codes = (doc: ParsedDocument): string[] => doc.errors.map((e) => e.code);

describe('script and control blocks', () => {
  it('skips a .control block whole: no line inside is an element and nothing inside is reported', () => {
    const text = 'bias with a script\nV1 in 0 5\nR1 in out 10k\n.control\nop\nif out > 0.5\n  let x = 2\nend\nprint v(out)\n= broken ( {\n.endc\nR2 out 0 10k\n.end\n';
    const doc = read(text);
    expect(shape(doc)).toEqual(['title', 'element V1', 'element R1', 'skipped block .control', 'element R2', 'end']);
    expect(codes(doc)).toEqual([]);
    const block = doc.cards[3]!;
    expect(text.slice(block.span.start, block.span.end)).toBe('.control\nop\nif out > 0.5\n  let x = 2\nend\nprint v(out)\n= broken ( {\n.endc');
  });

  it('skips .data ... .enddata blocks in any letter case', () => {
    const doc = read('t\n.DATA sweep r1 r2\n+ 1k 2k\n3k 4k\n.ENDDATA\nR1 a 0 1k\n');
    expect(shape(doc)).toEqual(['title', 'skipped block .DATA', 'element R1']);
    expect(codes(doc)).toEqual([]);
  });

  it('reports a block the file never closes, once, and skips the rest', () => {
    const doc = read('t\nR1 a 0 1k\n.control\nrun\nR9 x y 1\n');
    expect(shape(doc)).toEqual(['title', 'element R1', 'skipped block .control']);
    expect(codes(doc)).toEqual(['block-not-closed']);
  });
});

describe('analysis and output cards', () => {
  it('skips them without reading their fields', () => {
    const doc = read('t\n.meas tran tdelay TRIG v(in) VAL=0.5 RISE=1 TARG v(out) VAL=0.5 FALL=1\n.meas dc vx when v(out)=2\n.ic v(out)=1 v(in)=\n.nodeset v(b)=0.7\n.print dc v(out) =\n.probe\n.save all\n.four 1k v(out)\n.backanno\n.prot\n.unprot\n.del lib "x.lib" tt\n.tran 1n 1u\n+ 0 1n\n');
    expect(codes(doc)).toEqual([]);
    expect(doc.cards.filter((c) => c.kind === 'skipped')).toHaveLength(13);
  });

  it('reads .title, .global and the .opt spelling of .options', () => {
    const doc = read('t\n.title Bandgap core, rev B\n.global vdd vss\n.opt tnom=25 abstol 1e-12\n');
    expect(doc.cards[1]).toMatchObject({ kind: 'skipped', group: 'title', text: 'Bandgap core, rev B' });
    expect(doc.cards[2]).toMatchObject({ kind: 'global' });
    expect(doc.cards[2]!.kind === 'global' && doc.cards[2]!.nodes.map((t) => t.text)).toEqual(['vdd', 'vss']);
    expect(doc.cards[3]).toMatchObject({ kind: 'option' });
    expect(codes(doc)).toEqual([]);
  });

  it('reports an unknown dot card once, located on its command and naming it, without reading its fields', () => {
    const doc = read('t\n.modle QN NPN BF=100 =\n');
    expect(codes(doc)).toEqual(['dot-card-unknown']);
    const e = doc.errors[0]!;
    expect(doc.text.slice(e.span.start, e.span.end)).toBe('.modle');
    // One transposed pair of letters from a known card: it is named as what was most likely meant.
    expect(e.data).toEqual({ command: '.modle', suggestion: '.model' });
    expect(e.message).toContain('did you mean .model?');
  });

  it('names no suggestion for a dot card nothing known is close to', () => {
    const doc = read('t\n.frobnicate x\n');
    expect(doc.errors[0]!.data).toEqual({ command: '.frobnicate' });
  });

  it('ends the analysed netlist at .alter and keeps the alternatives as one card', () => {
    const doc = read('t\nR1 a 0 1k\n.alter\nR1 a 0 2k\n.alter second\n.end\n');
    expect(shape(doc)).toEqual(['title', 'element R1', 'skipped alternative .alter']);
    expect(codes(doc)).toEqual([]);
  });
});

describe('comment forms', () => {
  it('reads $ and // at the start of a line as comments', () => {
    const doc = read('t\n$ a note\n$note without a blank\n// another note\n  // indented\nR1 a 0 1k $ end-of-line note\n');
    expect(shape(doc)).toEqual(['title', 'comment a note', 'comment note without a blank', 'comment another note', 'comment indented', 'element R1']);
    expect(codes(doc)).toEqual([]);
  });
});

describe('conditionals and functions', () => {
  it('reads .if/.elseif/.else/.endif with their conditions as written', () => {
    const doc = read('t\n.if (corner == 1)\nR1 a 0 1k\n.elseif (corner==2) ; slow\nR1 a 0 2k\n.else\nR1 a 0 3k\n.endif\n');
    expect(shape(doc)).toEqual([
      'title',
      'condition if (corner == 1)',
      'element R1',
      'condition elseif (corner==2)',
      'element R1',
      'condition else',
      'element R1',
      'condition endif',
    ]);
    expect(codes(doc)).toEqual([]);
  });

  it('reports an unclosed .if and a stray .endif', () => {
    expect(codes(read('t\n.endif\n'))).toEqual(['condition-without-if']);
    expect(codes(read('t\n.if (a)\nR1 a 0 1\n'))).toEqual(['condition-missing-endif']);
  });

  it('reads .func with and without = and braces', () => {
    const doc = read('t\n.func half(x) = {x/2}\n.func gm(ic, vt) ic / vt\n.func bad\n');
    const funcs = doc.cards.filter((c) => c.kind === 'func');
    expect(funcs.map((f) => f.kind === 'func' && [f.name.text, f.args.map((a) => a.text), f.body?.text])).toEqual([
      ['half', ['x'], '{x/2}'],
      ['gm', ['ic', 'vt'], 'ic / vt'],
    ]);
    expect(codes(doc)).toEqual(['func-malformed']);
  });
});

describe('names that start with a digit', () => {
  it('tells a part number from a value by its form', () => {
    const doc = read('t\nQ1 c b e 2N3904\nD1 a k 1N4148\nM1 d g s s 2N7000 W=1u L=1u\nQ2 c b e 2N3906 2\nX1 a b 74HC04\nR1 a b 2k\n');
    const models = doc.cards.flatMap((c) => (c.kind === 'element' ? [[c.name.text, c.model?.text ?? c.subckt?.text ?? c.value?.text, c.area?.text]] : []));
    expect(models).toEqual([
      ['Q1', '2N3904', undefined],
      ['D1', '1N4148', undefined],
      ['M1', '2N7000', undefined],
      ['Q2', '2N3906', '2'],
      ['X1', '74HC04', undefined],
      ['R1', '2k', undefined],
    ]);
    expect(codes(doc)).toEqual([]);
  });
});

describe('model and library files', () => {
  it('knows a file whose first line is a definition card has no title', () => {
    for (const t of ['.model QN NPN BF=100', '\ufeff.SUBCKT amp a b', '.lib tt', '.param x=1', '.include "a.lib"', '  .inc a.lib']) {
      expect(startsWithDefinitionCard(t), t).toBe(true);
    }
    for (const t of ['Bias test', '* models', 'R1 a 0 1k', '.tran 1n 1u', '']) expect(startsWithDefinitionCard(t), t).toBe(false);
  });
});

// Completions chosen by the position inside a card, on inline netlists with a cursor marker.

import { describe, expect, it } from 'vitest';
import { completionsAt } from '../../../shared-analysis/src/features/completion';
import { analyseText, withCursor } from './fixture';

/** The one helper of this feature: labels offered at the cursor must include `has` and exclude `lacks`. */
function check(marked: string, has: string[], lacks: string[] = []): ReturnType<typeof completionsAt> {
  const { text, offset } = withCursor(marked);
  const analysis = analyseText(text);
  const items = completionsAt(analysis, '/t/main.cir', offset);
  const labels = items.map((i) => i.label);
  for (const h of has) expect(labels, `offers ${h}`).toContain(h);
  for (const l of lacks) expect(labels, `does not offer ${l}`).not.toContain(l);
  for (const i of items) expect(i.replace.end).toBe(offset);
  return items;
}

const BASE = (line: string) => `Completion checks
.param rset=10k
VCC vcc 0 DC 5
.model QN NPN (BF=100)
.model QP PNP (BF=80)
.model NM NMOS (KP=50u)
.subckt cell a b
RC a b 1k
.ends cell
${line}
.end
`;

describe('completion', () => {
  it('reads a bare continuation marker as an empty word, also at the very end of the document', () => {
    // The form that threw ("t\n+\n+" at the end): a `+` alone continues the card before it.
    for (const marked of ['t\n+\n+|', 't\n+\n+|\n', 'Title\nQ1 c b\n+|', 'Title\nQ1 c b\n+ e |']) {
      const { text, offset } = withCursor(marked);
      expect(() => completionsAt(analyseText(text), '/t/main.cir', offset), JSON.stringify(marked)).not.toThrow();
    }
    // After `Q1 c b` continued by `+ e `, the next field of a bipolar transistor is its model.
    check(BASE('Q1 c b\n+ e |'), ['QN', 'QP'], ['NM']);
  });

  it('offers element letters with their field order, and dot cards, on an empty line', () => {
    const items = check(BASE('|'), ['R', 'Q', 'M', 'X', '.model', '.param', '.subckt']);
    const q = items.find((i) => i.label === 'Q')!;
    expect(q.detail).toBe('Bipolar transistor');
    expect(q.documentation).toContain('collector base emitter');
  });
  it('offers dot cards after a dot', () => {
    check(BASE('.in|'), ['.include', '.end'], ['R']);
  });
  it('offers bipolar models (and only those) in a Q card model field', () => {
    check(BASE('Q5 c b e |'), ['QN', 'QP'], ['NM']);
  });
  it('offers MOS models in an M card model field and instance parameters after it', () => {
    check(BASE('M1 d g s b |'), ['NM'], ['QN']);
    const items = check(BASE('M1 d g s b NM |'), ['W', 'L', 'M']);
    expect(items.find((i) => i.label === 'W')!.detail).toContain('channel width');
  });
  it('offers nodes in node fields', () => {
    check(BASE('R7 |'), ['vcc', '0'], ['a', 'b']);
  });
  it('offers subcircuit names on an X card', () => {
    check(BASE('X1 vcc 0 |'), ['cell']);
  });
  it('offers model parameters with their meaning and default for the model type', () => {
    const items = check(BASE('.model QX NPN (|'), ['IS', 'BF', 'VAF'], ['KP']);
    // Defaults: docs/DEVICE-MODELS.md (BF = 100).
    expect(items.find((i) => i.label === 'BF')!.documentation).toBe('Default 100.');
    check(BASE('.model MX PMOS |'), ['KP', 'VTO', 'LAMBDA'], ['BF']);
    // The newer kinds have their own tables (docs/DEVICE-MODELS.md): JFET IDSS = BETA·VTO², VTO −2 V by default.
    const jfet = check(BASE('.model JX NJF (|'), ['BETA', 'VTO', 'LAMBDA', 'VTOTC', 'BETATCE'], ['BF', 'KP']);
    expect(jfet.find((i) => i.label === 'VTO')!.documentation).toBe('Default −2.');
    check(BASE('.model SX SW (|'), ['RON', 'ROFF', 'VT', 'VH'], ['IT']);
    check(BASE('.model WX CSW (|'), ['RON', 'ROFF', 'IT', 'IH'], ['VT']);
    check(BASE('.model RX R (|'), ['RSH', 'TC1', 'TC2'], ['BF']);
  });
  it('offers model types after a model name', () => {
    check(BASE('.model QX |'), ['NPN', 'PNP', 'NMOS', 'PMOS', 'D', 'NJF', 'PJF', 'SW', 'CSW', 'R']);
  });
  it('offers parameters inside braces', () => {
    const items = check(BASE('R8 vcc 0 {rs|'), ['rset']);
    expect(items.find((i) => i.label === 'rset')!.detail).toBe('= 10000');
  });
  it('offers nothing in a comment or on the title line', () => {
    check(BASE('* a comment |'), [], ['R', '.model']);
    check(`Complet|ion checks\nR1 a 0 1k\n.end\n`, [], ['R']);
  });
});

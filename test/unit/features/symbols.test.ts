// The document outline: structures with their devices, subcircuits with their bodies, models and parameters.

import { describe, expect, it } from 'vitest';
import { documentSymbols, type OutlineSymbol } from '../../../shared-analysis/src/features/symbols';
import { analyseText } from './fixture';

/** Renders the outline as indented `kind name` lines. */
function render(list: OutlineSymbol[], depth = 0): string[] {
  return list.flatMap((s) => [`${'  '.repeat(depth)}${s.kind} ${s.name}`, ...render(s.children, depth + 1)]);
}

/** The one helper of this feature. */
function check(text: string, expected: string[]): void {
  const analysis = analyseText(text);
  const outline = documentSymbols(analysis, '/t/main.cir');
  for (const s of outline.flatMap(function all(x): OutlineSymbol[] { return [x, ...x.children.flatMap(all)]; })) {
    expect(s.selectionSpan.start).toBeGreaterThanOrEqual(s.span.start);
    expect(s.selectionSpan.end).toBeLessThanOrEqual(s.span.end);
  }
  expect(render(outline)).toEqual(expected);
}

describe('document symbols', () => {
  it('lists the mirror with its devices, then the definitions in text order', () => {
    check(
      `Outline checks
.param rset=9.3k
VCC vcc 0 DC 10
RREF vcc ref {rset}
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 1k
.subckt pad a
RP a 0 1k
.ends pad
X1 out pad
.model QN NPN (BF=100)
.end
`,
      [
        'structure simple mirror (Q1)',
        '  device Q1',
        '  device Q2',
        'parameter rset',
        'subcircuit pad',
        '  device RP',
        'model QN',
      ],
    );
  });
});

// Every editor feature at every offset of valid, broken and mutated netlists: no throw, no NaN or "undefined" in the text, spans inside the document.

import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { completionsAt } from '../../../shared-analysis/src/features/completion';
import { hoverAt } from '../../../shared-analysis/src/features/hover';
import { inlayHints } from '../../../shared-analysis/src/features/inlay';
import { definitionAt, prepareRename, referencesAt, renameAt } from '../../../shared-analysis/src/features/navigation';
import { documentSymbols } from '../../../shared-analysis/src/features/symbols';
import type { Span } from '../../../shared-analysis/src/types';
import { analyseText } from './fixture';

const SEEDS = [
  `Mirror with a subcircuit and parameters
.param rr=9.3k
VCC vcc 0 DC 10
RREF vcc ref {rr}
Q1 ref ref 0 QN
Q2 out ref 0 QN 2 ; ratioed
RL vcc out 1k
.subckt cell a b w=1u
M1 a a b b NM W={w} L=1u
+ M=2
.ends cell
X1 out 0 cell w=2u
.model QN NPN (BF=100 VAF=50)
.model NM NMOS (KP=50u VTO=0.6)
.end
`,
  `Broken on purpose
Q1 c b
R1 a
.model
.subckt
X9 a b nothing
V1 a 0 DC {1/0}
+ stray
.ends
`,
];

function inside(span: Span, length: number): boolean {
  return span.start >= 0 && span.end <= length && span.start <= span.end;
}

/** The one helper: every feature at `offset` of `text` behaves. */
function check(text: string, offset: number): void {
  const uri = '/t/main.cir';
  const a = analyseText(text);
  const h = hoverAt(a, uri, offset);
  if (h) {
    expect(h.markdown).not.toMatch(/NaN|undefined|\[object/);
    expect(inside(h.span, text.length)).toBe(true);
  }
  for (const x of inlayHints(a, uri, { start: 0, end: text.length }, 'full')) {
    expect(x.label).not.toMatch(/NaN|undefined/);
    expect(x.offset).toBeLessThanOrEqual(text.length);
  }
  for (const c of completionsAt(a, uri, offset)) expect(inside(c.replace, text.length)).toBe(true);
  for (const l of [...definitionAt(a, uri, offset), ...referencesAt(a, uri, offset)]) expect(l.span.start).toBeGreaterThanOrEqual(0);
  const p = prepareRename(a, uri, offset);
  if ('span' in p) expect(inside(p.span, text.length)).toBe(true);
  else expect(p.error).toMatch(/\.$/);
  const r = renameAt(a, uri, offset, 'renamed_1');
  if ('error' in r) expect(r.error.length).toBeGreaterThan(10);
  documentSymbols(a, uri);
}

describe('editor features on any input', () => {
  it('answer at every offset of the seed netlists', () => {
    for (const text of SEEDS) for (let off = 0; off <= text.length; off += 3) check(text, off);
  });

  it('answer at random offsets of mutated netlists', () => {
    const mutated = fc
      .tuple(fc.constantFrom(...SEEDS), fc.nat(), fc.nat(), fc.constantFrom('', ' ', '{', '}', '=', '+', '\n', '\r\n', '*', 'Q', '.subckt x', '𝛃', '$ ', ';'))
      .map(([seed, at, len, insert]) => {
        const i = at % (seed.length + 1);
        return seed.slice(0, i) + insert + seed.slice(i + (len % 6));
      });
    fc.assert(
      fc.property(mutated, fc.nat(), (text, at) => {
        check(text, at % (text.length + 1));
      }),
      { seed: 20261201, numRuns: 60 },
    );
  });
});

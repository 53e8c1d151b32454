// The fuzz target's own tests: its first cases hold, a case is rebuilt the same from (seed, index), and
// each invariant really fails on a planted violation (so a clean run means something).
// CI runs 20,000 cases with `npm run fuzz` (see .ci/run); this file keeps the target itself working.

import { describe, expect, it } from 'vitest';
import { analyse } from '../../shared-analysis/src/service';
import { MemoryWorkspace, type Finding } from '../../shared-analysis/src/types';
import { DEFAULT_SEED, InvariantError, caseText, checkAnalysis, checkFix, jsonCarriesEveryNumber, runCase } from './target';
import { JsonEntries } from '../../server/src/json-stream';

const URI = '/w/top.cir';
const healthy = () => analyse({ uri: URI, text: 'Divider\nV1 a 0 10\nR1 a b 1k\nR2 b 0 1k\n.end\n' }, new MemoryWorkspace({}), { corners: { enabled: false } });

describe('the fuzz target', () => {
  it('holds on its first 150 cases of the default seed', () => {
    for (let i = 0; i < 150; i++) {
      try {
        runCase(DEFAULT_SEED, i);
      } catch (e) {
        throw new Error(`case ${i}: ${e instanceof Error ? e.message : String(e)}\n${caseText(DEFAULT_SEED, i)}`);
      }
    }
  }, 120_000);

  it('rebuilds a case from its seed and index alone', () => {
    expect(caseText(7, 12345)).toBe(caseText(7, 12345));
    expect(caseText(7, 12345)).not.toBe(caseText(7, 12346));
    expect(caseText(8, 12345)).not.toBe(caseText(7, 12345));
  });

  it('passes a healthy analysis', () => {
    expect(() => checkAnalysis(healthy())).not.toThrow();
  });

  const planted: [string, (f: Finding) => void][] = [
    ['a range one past the end of the text', (f) => (f.span = { start: 0, end: 1e6 })],
    ['an infinite number in the data', (f) => (f.data = { error: Infinity })],
    ['NaN in a message', (f) => (f.message = 'The current is NaN mA.')],
    ['Infinity in a message', (f) => (f.message = 'The ratio is ×Infinity.')],
    ['a leaked undefined in a message', (f) => (f.message = 'R1 = undefined V')],
    ['a code missing from the catalogue', (f) => (f.code = 'no-such-code')],
  ];
  for (const [what, plant] of planted) {
    it(`fails on ${what}`, () => {
      const a = healthy();
      a.findings.push({ code: 'node-single-connection', severity: 'warning', message: 'm', uri: URI, span: { start: 0, end: 1 } });
      plant(a.findings[a.findings.length - 1]!);
      expect(() => checkAnalysis(a)).toThrow(InvariantError);
    });
  }

  it('fails on an infinite node voltage', () => {
    const a = healthy();
    a.operatingPoint!.nodes['b'] = -Infinity;
    expect(() => checkAnalysis(a)).toThrow(/operatingPoint\.nodes\.b/);
  });

  it('fails on a number JSON would write as null, also inside a streamed table, and passes a null of its own', () => {
    // ECMA-404 has no NaN or Infinity; JSON.stringify writes them as null (ECMA-262, SerializeJSONProperty).
    expect(() => jsonCarriesEveryNumber({ files: [{ power: new JsonEntries(() => [['R1', NaN]]) }] }, 'doc')).toThrow(/doc\.files\.0\.power\.R1 = NaN/);
    expect(() => jsonCarriesEveryNumber({ v: new Float64Array([1, Infinity]) }, 'doc')).toThrow(/doc\.v\.1 = Infinity/);
    expect(() => jsonCarriesEveryNumber({ note: null, text: 'a:null', n: [1, 2] }, 'doc')).not.toThrow();
  });

  it('fails on a fix whose text does not parse or does not define its model', () => {
    const a = healthy();
    const f: Finding = { code: 'model-not-found', severity: 'error', message: 'm', uri: URI, span: { start: 0, end: 1 } };
    const end = a.documents[URI]!.text.indexOf('.end\n'); // before .end, where a card is still read
    expect(() => checkFix(a, f, { title: 'ok', edits: [{ uri: URI, span: { start: end, end }, newText: '.model qn npn (BF=100)\n' }] })).not.toThrow();
    expect(() => checkFix(a, f, { title: 'broken', edits: [{ uri: URI, span: { start: end, end }, newText: 'R9 a\n' }] })).toThrow(/does not parse/);
    expect(() => checkFix(a, f, { title: 'comment', edits: [{ uri: URI, span: { start: end, end }, newText: '.model q$ npn (BF=100)\n' }] })).toThrow(InvariantError);
    expect(() => checkFix(a, f, { title: 'overlap', edits: [{ uri: URI, span: { start: 0, end: 3 }, newText: 'x' }, { uri: URI, span: { start: 2, end: 4 }, newText: 'y' }] })).toThrow(/overlapping/);
  });
});

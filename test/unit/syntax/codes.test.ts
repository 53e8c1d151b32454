// Ties the parser's findings to SYNTAX_CODES: every table code is emitted by a fixture, with the table's severity, and nothing else is.
//
// The fixtures follow the trade's netlist conventions as the README writes them down ("The netlist dialect";
// common practice, from memory). The type checker already rejects an addError() code
// that is not in the table; this test also catches table rows the parser never emits and fixtures
// whose findings fall outside the table.

import { describe, expect, it } from 'vitest';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { SYNTAX_CODES, type SyntaxCode } from '../../../shared-analysis/src/syntax/codes';
import { findingCatalogue } from '../../../shared-analysis/src/codes';

/** One netlist per code, each a minimal case that makes the parser report it. */
const FIXTURES: Record<SyntaxCode, { text: string; hasTitle?: boolean }> = {
  'title-looks-like-card': { text: 'R1 a b 1k\nV1 a 0 5\n' },
  'continuation-without-card': { text: '+ 1k\nR1 a 0 1k\n', hasTitle: false },
  'unrecognised-card': { text: 't\n#bad line\n' },
  'element-missing-fields': { text: 't\nR1 a\n' },
  'missing-model-name': { text: 't\nD1 a k 2\n' },
  'unsupported-source-form': { text: 't\nV1 a 0 POLY(1) b 0 1\n' },
  'source-missing-value': { text: 't\nV1 a 0 DC\n' },
  'unexpected-field': { text: 't\nC1 a 0 1u 2u\n' },
  'ignored-keyword': { text: 't\nD1 a 0 dmod OFF\n.model dmod D\n' },
  'unbalanced-brace': { text: 't\nR1 a b {rval\n' },
  'unterminated-quote': { text: "t\nR1 a b 'rval\n" },
  'unbalanced-parenthesis': { text: 't\nV1 a 0 SIN(0 1 1k\n' },
  'assignment-missing-value': { text: 't\n.param rval=\n' },
  'assignment-missing-name': { text: 't\n.param =5\n' },
  'model-missing-fields': { text: 't\n.model qn\n' },
  'subckt-missing-name': { text: 't\n.subckt\n.ends\n' },
  'subckt-missing-ends': { text: 't\n.subckt cell a b\nR1 a b 1k\n' },
  'ends-without-subckt': { text: 't\n.ends\n' },
  'ends-name-mismatch': { text: 't\n.subckt cell a b\nR1 a b 1k\n.ends other\n' },
  'param-missing-assignment': { text: 't\n.param rval\n' },
  'include-missing-path': { text: 't\n.include\n' },
  'lib-missing-fields': { text: 't\n.lib\n' },
  'lib-section-missing-endl': { text: '.lib typical\nR1 a b 1k\n', hasTitle: false },
  'endl-without-lib-section': { text: '.endl\n', hasTitle: false },
  'endl-name-mismatch': { text: '.lib typical\nR1 a b 1k\n.endl slow\n', hasTitle: false },
  'temp-missing-value': { text: 't\n.temp\n' },
  'text-after-end': { text: 't\nR1 a 0 1k\n.end\nR2 a 0 1k\n' },
  'dot-card-unknown': { text: 't\n.frobnicate 1 2\n' },
  'block-not-closed': { text: 't\nR1 a 0 1k\n.control\nrun\n' },
  'condition-missing-endif': { text: 't\n.if (a == 1)\nR1 a 0 1k\n' },
  'condition-without-if': { text: 't\n.endif\n' },
  'condition-missing-expression': { text: 't\n.if\n.endif\n' },
  'func-malformed': { text: 't\n.func half\n' },
  'too-many-problems': { text: `t\nR1 a b 1k ${Array.from({ length: 30 }, (_, i) => `x${i}`).join(' ')}\n` },
};

/** Parses `text` and checks `code` is among its findings with the table's severity, and every finding's code is in the table. */
function check(code: SyntaxCode, fixture: { text: string; hasTitle?: boolean }): void {
  const doc = parse('file:///codes.cir', fixture.text, { hasTitle: fixture.hasTitle ?? true });
  const hits = doc.errors.filter((e) => e.code === code);
  expect(hits.length, `${code}: ${JSON.stringify(doc.errors.map((e) => e.code))}`).toBeGreaterThan(0);
  for (const e of hits) expect(e.severity).toBe(SYNTAX_CODES[code].severity);
  for (const e of doc.errors) expect(Object.keys(SYNTAX_CODES)).toContain(e.code);
}

describe('SYNTAX_CODES', () => {
  for (const [code, fixture] of Object.entries(FIXTURES) as [SyntaxCode, { text: string; hasTitle?: boolean }][]) {
    it(`is emitted as ${code} with the table's severity`, () => check(code, fixture));
  }

  it('has a fixture for every code and no fixture outside the table', () => {
    expect(Object.keys(FIXTURES).sort()).toEqual(Object.keys(SYNTAX_CODES).sort());
  });

  it('gives every code a kebab-case name, a known severity and a one-sentence summary', () => {
    for (const [code, info] of Object.entries(SYNTAX_CODES)) {
      expect(code).toMatch(/^[a-z]+(-[a-z0-9]+)*$/);
      expect(['error', 'warning', 'info', 'hint']).toContain(info.severity);
      expect(info.summary).toMatch(/^[A-Z`.].*\.$/);
    }
  });

  it('reaches the finding catalogue with its severity and the syntax group', () => {
    const catalogue = findingCatalogue();
    for (const [code, info] of Object.entries(SYNTAX_CODES)) {
      expect(catalogue[code]).toEqual({ ...info, group: 'syntax' });
    }
  });
});

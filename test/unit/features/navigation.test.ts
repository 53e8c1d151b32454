// Definition, references and rename on inline netlists with a cursor marker.

import { describe, expect, it } from 'vitest';
import { definitionAt, prepareRename, referencesAt, renameAt } from '../../../shared-analysis/src/features/navigation';
import type { Location } from '../../../shared-analysis/src/types';
import { analyseText, withCursor } from './fixture';

type Nav =
  | { definition: string[] }
  | { references: string[] }
  | { rename: string; to: string[] }
  | { renameRefused: RegExp; newName?: string };

/** Renders locations as `uri:line:text` so expectations read like the netlist. */
function show(texts: Record<string, string>, list: Location[]): string[] {
  return list
    .map((l) => {
      const text = texts[l.uri] ?? '';
      const line = text.slice(0, l.span.start).split('\n').length;
      return `${l.uri.replace('/t/', '')}:${line}:${text.slice(l.span.start, l.span.end)}`;
    })
    .sort();
}

/** The one helper of this feature. */
function check(marked: string, expected: Nav, files: Record<string, string> = {}): void {
  const { text, offset } = withCursor(marked);
  const analysis = analyseText(text, files);
  const texts: Record<string, string> = { ...files, '/t/main.cir': text };
  const uri = '/t/main.cir';
  if ('definition' in expected) expect(show(texts, definitionAt(analysis, uri, offset))).toEqual([...expected.definition].sort());
  if ('references' in expected) expect(show(texts, referencesAt(analysis, uri, offset))).toEqual([...expected.references].sort());
  if ('rename' in expected) {
    const r = renameAt(analysis, uri, offset, expected.rename);
    expect('edits' in r ? r.edits.length : r.error).toBe(expected.to.length);
    if ('edits' in r) {
      expect(r.edits.every((e) => e.newText === expected.rename)).toBe(true);
      expect(show(texts, r.edits)).toEqual([...expected.to].sort());
    }
  }
  if ('renameRefused' in expected) {
    const p = prepareRename(analysis, uri, offset);
    const r = renameAt(analysis, uri, offset, expected.newName ?? 'fresh');
    expect('error' in r && r.error).toMatch(expected.renameRefused);
    if (expected.newName === undefined) expect('error' in p && p.error).toMatch(expected.renameRefused);
  }
}

const NET = `Navigation checks
.include "lib.inc"
.param rset=10k
VCC vcc 0 DC 5
RSET vcc ref {rset}
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out {rset/2}
.subckt load a
RIN a n1 1k
RGND n1 0 1k
.ends load
XL1 out load
R9 n1 0 1k
V9 n1 0 DC 1
.end
`;
const LIB = { '/t/lib.inc': '.model QN NPN (BF=120)\nRLIB ref 0 1meg\n' };

function at(text: string, before: string, inset = 1): string {
  const i = text.indexOf(before);
  if (i < 0) throw new Error(`"${before}" not in the netlist`);
  return text.slice(0, i + inset) + '|' + text.slice(i + inset);
}

describe('definition', () => {
  it('goes from a device model to its .model card in the included file', () => {
    check(at(NET, 'QN\nQ2'), { definition: ['lib.inc:1:QN'] }, LIB);
  });
  it('goes from a parameter use to its .param assignment', () => {
    check(at(NET, 'rset}'), { definition: ['main.cir:3:rset'] }, LIB);
  });
  it('goes from an instance to its subcircuit', () => {
    check(at(NET, 'load\nR9'), { definition: ['main.cir:9:load'] }, LIB);
  });
  it('goes from an include path to the included file', () => {
    const { text, offset } = withCursor(at(NET, 'lib.inc', 2));
    const analysis = analyseText(text, LIB);
    expect(definitionAt(analysis, '/t/main.cir', offset).map((l) => l.uri)).toEqual(['/t/lib.inc']);
  });
  it('goes nowhere from the path of an include whose file does not exist', () => {
    // The include-not-found finding explains the missing file; a location inside it would open an empty editor.
    const { text, offset } = withCursor('t\n.include noth|ere.inc\n');
    const analysis = analyseText(text);
    expect(analysis.findings.map((f) => f.code)).toContain('include-not-found');
    expect(definitionAt(analysis, '/t/main.cir', offset)).toEqual([]);
  });
  it('goes from a node inside a subcircuit to the port that names it', () => {
    check(at(NET, 'a n1'), { definition: ['main.cir:9:a'] }, LIB);
  });
});

describe('references', () => {
  it('finds a node across the document and the included file', () => {
    check(at(NET, 'ref {rset}'), { references: ['main.cir:5:ref', 'main.cir:6:ref', 'main.cir:6:ref', 'main.cir:7:ref', 'lib.inc:2:ref'] }, LIB);
  });
  it('keeps a subcircuit-internal node local to the subcircuit', () => {
    check(at(NET, 'n1 1k'), { references: ['main.cir:10:n1', 'main.cir:11:n1'] }, LIB);
    check(at(NET, 'n1 0 1k\nV9'), { references: ['main.cir:14:n1', 'main.cir:15:n1'] }, LIB);
  });
  it('finds a parameter definition and its uses inside expressions', () => {
    check(at(NET, 'rset=10k'), { references: ['main.cir:3:rset', 'main.cir:5:rset', 'main.cir:8:rset'] }, LIB);
  });
  it('finds a model definition and every device that uses it', () => {
    check(at(NET, 'QN\nQ2'), { references: ['lib.inc:1:QN', 'main.cir:6:QN', 'main.cir:7:QN'] }, LIB);
  });
});

describe('rename', () => {
  it('renames a node everywhere in its scope, included file too', () => {
    check(at(NET, 'ref {rset}'), { rename: 'bias', to: ['main.cir:5:ref', 'main.cir:6:ref', 'main.cir:6:ref', 'main.cir:7:ref', 'lib.inc:2:ref'] }, LIB);
  });
  it('renames a parameter at its definition and its uses', () => {
    check(at(NET, 'rset/2'), { rename: 'rbias', to: ['main.cir:3:rset', 'main.cir:5:rset', 'main.cir:8:rset'] }, LIB);
  });
  it('refuses to rename ground', () => {
    check(at(NET, '0 DC 5', 0), { renameRefused: /ground/ }, LIB);
  });
  it('refuses a new node name that is ground, invalid, or already used', () => {
    check(at(NET, 'out ref'), { renameRefused: /join it to ground/, newName: '0' }, LIB);
    check(at(NET, 'out ref'), { renameRefused: /not a valid node name/, newName: 'a b' }, LIB);
    check(at(NET, 'out ref'), { renameRefused: /not a valid node name/, newName: 'x=1' }, LIB);
    check(at(NET, 'out ref'), { renameRefused: /already exists in this scope/, newName: 'vcc' }, LIB);
  });
  it('refuses an invalid or clashing parameter name', () => {
    check(at(NET, 'rset=10k'), { renameRefused: /not a valid parameter name/, newName: '9lives' }, LIB);
    check(at(NET, 'rset=10k'), { renameRefused: /reserved/, newName: 'pi' }, LIB);
  });
  it('refuses to rename what is neither a node nor a parameter', () => {
    check(at(NET, 'Q2 out'), { renameRefused: /only node names and parameter names/i }, LIB);
  });
});

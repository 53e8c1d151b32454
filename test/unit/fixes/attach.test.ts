// attachFixes: one builder per code, the value edit that keeps the card's formatting, M= multipliers, and no-fix cases.

import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../../shared-analysis/src/analysis';
import { checkTargets, readTargets } from '../../../shared-analysis/src/checks/targets';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { parseNumber } from '../../../shared-analysis/src/elaborate/units';
import { attachFixes, attachSizingFixes } from '../../../shared-analysis/src/fixes/index';
import { valueEdit } from '../../../shared-analysis/src/fixes/resistor-for-current';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import type { BjtRecord } from '../../../shared-analysis/src/solve/types';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace, type Finding, type TextEdit } from '../../../shared-analysis/src/types';

const URI = '/a.cir';

function apply(text: string, edits: TextEdit[]): string {
  let out = text;
  for (const e of [...edits].sort((a, b) => b.span.start - a.span.start)) out = out.slice(0, e.span.start) + e.newText + out.slice(e.span.end);
  return out;
}

function prepare(text: string) {
  const doc = parse(URI, text, { hasTitle: true });
  const { circuit, documents } = elaborate(doc, new MemoryWorkspace({ [URI]: text }), {});
  const solver = new DcSolver(circuit);
  const nominal = solver.solve({});
  const structures = recogniseStructures(circuit);
  const options = resolveOptions({ corners: { enabled: false } });
  return { circuit, documents, solver, nominal, structures, options };
}

/** The one helper: the fixes attached to the findings of `code`, applied one by one to the text. */
function check(text: string, findings: Finding[], code: string, expected: { texts: string[]; preferredIndex?: number; titleSays?: string[] }): void {
  const p = prepare(text);
  attachFixes(findings, { documents: p.documents, circuit: p.circuit, structures: p.structures, options: p.options });
  // The sizing fix is computed on demand, as for the editor's code-action request.
  attachSizingFixes(findings, { documents: p.documents, circuit: p.circuit, structures: p.structures, options: p.options, solver: p.solver });
  const f = findings.find((x) => x.code === code)!;
  const fixes = f.fixes ?? [];
  expect(fixes.map((x) => apply(text, x.edits))).toEqual(expected.texts);
  if (expected.preferredIndex !== undefined) expect(fixes.findIndex((x) => x.preferred)).toBe(expected.preferredIndex);
  for (const s of expected.titleSays ?? []) expect(fixes.some((x) => x.title.includes(s))).toBe(true);
}

describe('valueEdit', () => {
  it('replaces only the value field', () => {
    const text = 't\nR1  vcc   b    4.3k   ; feed\n';
    const p = prepare(text);
    const r = p.circuit.elements.find((e) => e.name === 'R1')!;
    expect(apply(text, [valueEdit(URI, r.origin, '4.7k')!])).toBe('t\nR1  vcc   b    4.7k   ; feed\n');
  });

  it('gives nothing for an origin without a value field', () => {
    expect(valueEdit(URI, { uri: URI, span: { start: 0, end: 1 }, instances: [] }, '1k')).toBeUndefined();
  });
});

describe('attachFixes', () => {
  it('unifies a mismatched output model from the per-device finding data', () => {
    const text = 't\nV1 v 0 5\nR1 v b 4.3k\nQ1 b b 0 qa\nQ2 o b 0   qb   ; out\nR2 v o 1k\n.model qa npn (bf=100)\n.model qb npn (bf=50)\n.end\n';
    const at = text.indexOf('Q2');
    const findings: Finding[] = [
      { code: 'mirror-unmatched', severity: 'warning', message: 'm', uri: URI, span: { start: at, end: at + 2 }, data: { device: 'Q2', referenceDevice: 'Q1', models: ['qa', 'qb'] } },
    ];
    check(text, findings, 'mirror-unmatched', {
      texts: [text.replace('Q2 o b 0   qb', 'Q2 o b 0   qa')],
      preferredIndex: 0,
      titleSays: ["Use model qa (the reference device Q1's) for Q2"],
    });
  });

  it('adds the missing model card', () => {
    const text = 't\nQ1 c b 0 QX\n.end\n';
    const findings: Finding[] = [
      { code: 'model-not-found', severity: 'error', message: 'm', uri: URI, span: { start: 12, end: 14 }, data: { modelName: 'QX', expectedKinds: ['npn', 'pnp'] } },
    ];
    const p = prepare(text);
    attachFixes(findings, { documents: p.documents, circuit: p.circuit, structures: p.structures, options: p.options });
    // The sizing fix is computed on demand, as for the editor's code-action request.
    attachSizingFixes(findings, { documents: p.documents, circuit: p.circuit, structures: p.structures, options: p.options, solver: p.solver });
    expect(findings[0].fixes).toHaveLength(2);
    expect(apply(text, findings[0].fixes![1].edits)).toContain('.model QX pnp (');
  });

  it('leaves findings without a builder alone and keeps fixes already there', () => {
    const text = 't\nR1 a 0 1k\n';
    const existing = { title: 'other', edits: [] };
    const findings: Finding[] = [{ code: 'something-else', severity: 'info', message: 'm', uri: URI, span: { start: 0, end: 1 }, fixes: [existing] }];
    const p = prepare(text);
    attachFixes(findings, { documents: p.documents, circuit: p.circuit, structures: p.structures, options: p.options });
    expect(findings[0].fixes).toEqual([existing]);
  });

  // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IREF = (V+ − VBE)/R, IOUT = IREF/(1 + 2/β): the exact
  // R for 1 mA is about 4.14 kΩ, between E24's 3.9k and 4.3k and next to E96's 4.12k (IEC 60063:2015).
  it('offers the other E24 neighbour and, as neither meets ±2 %, the closest E96 value, preferred', () => {
    const text = '5 V mirror\nVCC vcc 0 DC 5\nR1 vcc b 4.3k\nQ1 b b 0 qn\nQ2 out b 0 qn ; expect 1mA ±2%\nRL vcc out 2k\n.model qn npn (IS=1e-16 BF=100)\n.end\n';
    const p = prepare(text);
    const { targets } = readTargets(p.documents);
    const findings = checkTargets({ circuit: p.circuit, op: p.nominal.op, structures: p.structures, targets, options: p.options });
    attachFixes(findings, { documents: p.documents, circuit: p.circuit, structures: p.structures, options: p.options });
    // The sizing fix is computed on demand, as for the editor's code-action request.
    attachSizingFixes(findings, { documents: p.documents, circuit: p.circuit, structures: p.structures, options: p.options, solver: p.solver });
    const fixes = findings[0].fixes!;
    // 4.3k is already on the card, so writing it is not offered.
    expect(fixes.map((f) => apply(text, f.edits).split('\n')[2])).toEqual(['R1 vcc b 3.9k', 'R1 vcc b 4.12k']);
    expect(fixes[1].title).toContain('(E96)');
    expect(fixes[0].title).toMatch(/^Set R1 to 3\.9k \(E24\): Q2 → 1\.06 mA, \+6\.2 % from 1 mA$/);
    expect(fixes[1].preferred).toBe(true);
    expect(fixes[0].preferred).toBeUndefined();
  });

  it('writes the per-card value of a resistor with M= so the effective resistance is the standard one', () => {
    const text = '5 V mirror\nVCC vcc 0 DC 5\nR1 vcc b 8.6k m=2\nQ1 b b 0 qn\nQ2 out b 0 qn ; expect 1mA ±2%\nRL vcc out 2k\n.model qn npn (IS=1e-16 BF=100)\n.end\n';
    const p = prepare(text);
    const { targets } = readTargets(p.documents);
    const findings = checkTargets({ circuit: p.circuit, op: p.nominal.op, structures: p.structures, targets, options: p.options });
    attachFixes(findings, { documents: p.documents, circuit: p.circuit, structures: p.structures, options: p.options });
    // The sizing fix is computed on demand, as for the editor's code-action request.
    attachSizingFixes(findings, { documents: p.documents, circuit: p.circuit, structures: p.structures, options: p.options, solver: p.solver });
    const lines = findings[0].fixes!.map((f) => apply(text, f.edits).split('\n')[2]);
    expect(lines).toEqual(['R1 vcc b 7.8k m=2', 'R1 vcc b 8.24k m=2']);
    // Re-solving the edited text gives the current the title promised.
    const fixed = apply(text, findings[0].fixes![0].edits);
    const again = prepare(fixed);
    const ic = Math.abs((again.nominal.op.devices['Q2'] as BjtRecord).ic);
    const promised = /→ ([\d.]+) mA/.exec(findings[0].fixes![0].title)![1];
    expect(ic * 1e3).toBeCloseTo(Number(promised), 2);
    expect(parseNumber('7.8k').ok).toBe(true);
  });
});

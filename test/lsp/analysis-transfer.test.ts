// Splitting an analysis into parts for the thread boundary and putting it back together loses nothing.

import { describe, expect, it } from 'vitest';
import { mergePart, splitAnalysis } from '../../server/src/analysis-transfer';
import { analyse } from '../../shared-analysis/src/service';
import { hoverAt } from '../../shared-analysis/src/features/hover';
import { indexBuilder, indexOf } from '../../shared-analysis/src/features/document-index';
import { MemoryWorkspace } from '../../shared-analysis/src/types';

/** The one helper: split, pass every message through a structured clone (as postMessage does), merge, compare. */
function check(text: string, hoverAtText: string[]): void {
  const ws = new MemoryWorkspace({ '/t/main.cir': text });
  const original = analyse({ uri: '/t/main.cir', text, version: 3 }, ws, { corners: { enabled: false } });
  const { header, parts } = splitAnalysis(original);
  // The header is small whatever the circuit's size: the point's node and device tables come in parts.
  expect(Object.keys(header.operatingPoint!.nodes)).toEqual([]);
  expect(Object.keys(header.operatingPoint!.devices)).toEqual([]);
  expect(parts.filter((p) => p.kind === 'nodes').length).toBeGreaterThan(1);
  const copy = structuredClone(header);
  const builder = indexBuilder(copy.circuit!);
  for (const p of parts) {
    const before = copy.circuit!.elements.length;
    mergePart(copy, structuredClone(p));
    if (p.kind === 'elements') builder.add(copy.circuit!.elements, before);
  }
  builder.finish(copy);
  expect(copy).toEqual(original);
  // The tables built part by part are the ones built in one go.
  expect(indexOf(copy)).toEqual(indexOf(original));
  expect(indexOf(copy).elementByName.get('q2')).toBe(copy.circuit!.elements.find((e) => e.name === 'Q2'));
  // Models are shared objects again, as the elaborator made them.
  for (const e of copy.circuit!.elements) if ('model' in e) expect(Object.values(copy.circuit!.models)).toContain(e.model);
  for (const needle of hoverAtText) {
    const at = text.indexOf(needle) + 1;
    expect(hoverAt(copy, '/t/main.cir', at)).toEqual(hoverAt(original, '/t/main.cir', at));
  }
}

describe('analysis transfer', () => {
  it('round-trips a mirror with an unbounded Early voltage and many cards', () => {
    const lines = ['Transfer check', 'VCC vcc 0 DC 10', 'RREF vcc ref 9.3k', 'Q1 ref ref 0 QN', 'Q2 out ref 0 QN', 'RL vcc out 1k', '.model QN NPN (BF=100)'];
    // Enough resistors to need several parts of each kind.
    for (let k = 0; k < 4000; k++) lines.push(`RX${k} vcc x${k} 1k`, `RY${k} x${k} 0 2k`);
    lines.push('.end', '');
    check(lines.join('\n'), ['Q2 out', 'QN\nRL', 'RX17 ', 'x3999 0']);
  });
});

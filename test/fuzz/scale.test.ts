// Netlists past the call-argument limit (~120k) through the whole engine and the editor features that list everything.
import { describe, expect, it } from 'vitest';
import { analyseSession } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { inlayHints } from '../../shared-analysis/src/features/inlay';
import { documentSymbols } from '../../shared-analysis/src/features/symbols';

const URI = '/scale.cir';
/** Past the ~120k spread arguments at which V8 overflows its stack (common practice, from memory); 2^17 = 131,072. */
const N = 1 << 17;

function analyseText(text: string) {
  return analyseSession({ uri: URI, text }, new MemoryWorkspace({ [URI]: text }), { corners: { enabled: false } });
}

describe(`netlists with ${N} elements or instances`, () => {
  it('analyses resistors with dangling nodes: a finding for each node, no crash', () => {
    const lines = ['Dangling resistors'];
    for (let i = 0; i < N; i++) lines.push(`R${i} d${i} e${i} 1k`);
    const s = analyseText(lines.join('\n') + '\n.end\n');
    expect(s.analysis.circuit!.elements.length).toBe(N);
    // Both ends of every resistor connect nowhere else (the findings of one code are capped, with a summary).
    expect(s.analysis.findings.some((f) => f.code === 'node-single-connection')).toBe(true);
  }, 240_000);

  it('analyses as many supply rails around a mirror, and answers inlay hints and the outline over them', () => {
    const lines = ['Many rails', 'R1 r1 ref 10k', 'Q1 ref ref 0 QN', 'Q2 out ref 0 QN', 'RL r2 out 1k', '.model QN NPN'];
    for (let i = 0; i < N; i++) lines.push(`V${i} r${i} 0 ${1 + (i % 17)}`);
    const s = analyseText(lines.join('\n') + '\n.end\n');
    expect(s.analysis.operatingPoint?.converged).toBe(true);
    expect(s.analysis.structures.length).toBe(1);
    const text = s.analysis.documents[URI]!.text;
    expect(inlayHints(s.analysis, URI, { start: 0, end: text.length }, 'full').length).toBeGreaterThanOrEqual(N);
    expect(documentSymbols(s.analysis, URI).map((x) => x.kind)).toContain('structure');
  }, 240_000);

  it('answers inlay hints and document symbols for a subcircuit instantiated 2^17 times', () => {
    const lines = ['Instances', 'V1 vcc 0 5', '.subckt LOAD a', 'R1 a 0 1meg', '.ends'];
    for (let i = 0; i < N; i++) lines.push(`X${i} vcc LOAD`);
    const s = analyseText(lines.join('\n') + '\n.end\n');
    expect(s.analysis.circuit!.elements.length).toBe(N + 1);
    const text = s.analysis.documents[URI]!.text;
    // The R1 line inside the definition carries one hint that summarises every instance.
    const hints = inlayHints(s.analysis, URI, { start: 0, end: text.length }, 'full');
    expect(hints.some((h) => /^×131072: /.test(h.label) && /131072 instances, all alike/.test(h.tooltip ?? '') && (h.tooltip ?? '').length < 10_000)).toBe(true);
    expect(documentSymbols(s.analysis, URI).length).toBeGreaterThan(0);
  }, 240_000);
});

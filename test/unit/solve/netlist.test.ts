// The DC solver on text netlists through the parser and elaborator: results, finding spans into the text, subcircuits, de-duplication.

import { describe, expect, it } from 'vitest';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { solveOperatingPoint, withoutNetlistDuplicates } from '../../../shared-analysis/src/solve/dc';
import type { DcSolveResult } from '../../../shared-analysis/src/solve/dc';
import type { BjtRecord, TwoTerminalRecord } from '../../../shared-analysis/src/solve/types';
import { parse } from '../../../shared-analysis/src/syntax/index';
import type { Finding } from '../../../shared-analysis/src/types';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

/** Parses, elaborates and solves `text`; returns the solve and the netlist findings. */
function check(text: string): { r: DcSolveResult; netlist: Finding[]; text: string } {
  const root = parse('mem.cir', text, { hasTitle: true });
  const elab = elaborate(root, new MemoryWorkspace({ 'mem.cir': text }));
  return { r: solveOperatingPoint(elab.circuit), netlist: elab.findings, text };
}

describe('text netlists', () => {
  it('a resistor-fed NPN mirror matches IOUT = IREF/(1 + 2/β)', () => {
    const { r } = check(
      [
        'sensor bias mirror (invented scenario)',
        'VCC vcc 0 DC 12',
        'RREF vcc ref 22k',
        'Q1 ref ref 0 QSMALL',
        'Q2 out ref 0 QSMALL',
        'VMEAS out 0 6',
        '.model QSMALL NPN (IS=2e-15 BF=120)',
        '.end',
      ].join('\n'),
    );
    expect(r.op.converged).toBe(true);
    const iref = (r.op.devices.RREF as TwoTerminalRecord).current;
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IOUT = IREF/(1 + 2/β); 5e-8 allows the 1e-12 S junction conductance (≈5 pA here).
    expect((r.op.devices.Q2 as BjtRecord).ic / (iref / (1 + 2 / 120))).toBeCloseTo(1, 7);
  });

  it('a solver finding points at the card in the text, and through a subcircuit instance', () => {
    const text = [
      'shorted junction inside a cell (invented scenario)',
      'VCC vcc 0 5',
      'X1 vcc CELL',
      '.subckt CELL top',
      'R1 top k 1k',
      'D1 k 0 DGEN',
      'VZERO k 0 0',
      '.ends',
      '.model DGEN D (IS=1e-14)',
      '.end',
    ].join('\n');
    const { r } = check(text);
    const f = r.findings.find((x) => x.code === 'dc-junction-shorted')!;
    expect(f).toBeDefined();
    expect(text.slice(f.span.start, f.span.end)).toBe('D1 k 0 DGEN');
    expect(f.related?.some((rel) => text.slice(rel.span.start, rel.span.end) === 'X1 vcc CELL')).toBe(true);
    expect(r.op.nodes['X1.k']).toBe(0);
  });

  it('solver findings that repeat a netlist check are dropped by withoutNetlistDuplicates', () => {
    const { r, netlist } = check(['zero ohm (invented scenario)', 'V1 a 0 5', 'R0 a b 0', 'R1 b 0 1k', '.end'].join('\n'));
    expect(netlist.map((f) => f.code)).toContain('resistor-zero-value');
    expect(r.findings.map((f) => f.code)).toContain('dc-zero-resistance');
    expect(withoutNetlistDuplicates(r.findings, netlist).map((f) => f.code)).not.toContain('dc-zero-resistance');
    expect(withoutNetlistDuplicates(r.findings, []).map((f) => f.code)).toContain('dc-zero-resistance');
  });
});

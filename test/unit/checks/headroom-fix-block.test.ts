// The headroom fixes of one saturated output in an array of independent mirror cells: re-solved on the cell the
// changed resistor can move, never on the whole circuit, and confirmed by a fresh analysis of the whole netlist.

import { describe, expect, it } from 'vitest';
import { sizingFixes, type SizingFixContext } from '../../../shared-analysis/src/fixes/index';
import { headroomRequest } from '../../../shared-analysis/src/fixes/headroom';
import { analyseSession } from '../../../shared-analysis/src/service';
import type { DcSolver } from '../../../shared-analysis/src/solve/dc';
import { MemoryWorkspace, type Finding } from '../../../shared-analysis/src/types';
import { analyseNetlist, apply, URI } from './netlist-check';

/**
 * Six NPN mirror cells on one 5 V rail (invented values): a 10k reference resistor into a diode-connected device, an
 * output device with a 1k load. Cell 3's load is 47k, so its output saturates (about 0.42 mA would drop 20 V across
 * it); cell 4's output node is left unconnected (a wiring slip), so it saturates with no load to change.
 */
function array(): string {
  const lines = ['Six mirror cells on one rail', 'VCC vcc 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)'];
  for (let i = 0; i < 6; i++) {
    lines.push(`RR${i} vcc r${i} 10k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN`);
    if (i !== 4) lines.push(`RL${i} vcc o${i} ${i === 3 ? '47k' : '1k'}`);
  }
  lines.push('.end', '');
  return lines.join('\n');
}

/** The analysed array, its finding for `device`'s output, and a sizing context whose whole-circuit solver counts its solves. */
function setUp(device: string): { text: string; finding: Finding; ctx: SizingFixContext; wholeSolves: () => number } {
  const text = array();
  const session = analyseSession({ uri: URI, text }, new MemoryWorkspace({ [URI]: text }), { corners: { enabled: false } });
  const a = session.analysis;
  const finding = a.findings.find((f) => f.code === 'mirror-output-out-of-region' && f.data?.['device'] === device);
  expect(finding, `the out-of-region finding of ${device}`).toBeDefined();
  // The finding carries the headroom marker, so the fixes below go through the headroom path.
  expect(headroomRequest(finding!)).toBeDefined();
  let calls = 0;
  const solver = session.solver!;
  const counting = { solve: (o?: Parameters<DcSolver['solve']>[0]) => (calls++, solver.solve(o)) } as unknown as DcSolver;
  const ctx: SizingFixContext = { circuit: a.circuit!, solver: counting, structures: a.structures, documents: a.documents, options: a.options, point: a.operatingPoint };
  return { text, finding: finding!, ctx, wholeSolves: () => calls };
}

/** The number before `unit` in a fix title ("QO3 → 426 µA", "headroom 0.431 V"), in base units. */
function titled(title: string, pattern: RegExp): number {
  const m = pattern.exec(title);
  expect(m, `${pattern} in "${title}"`).not.toBeNull();
  const scale: Record<string, number> = { m: 1e-3, 'µ': 1e-6, n: 1e-9, '': 1 };
  return Number(m![1]) * scale[m![2] ?? '']!;
}

describe('headroom fixes in an array of independent cells', () => {
  it('are re-solved on the saturated cell alone, and a fresh analysis of the whole netlist confirms the preferred one', () => {
    const { text, finding, ctx, wholeSolves } = setUp('QO3');
    const fixes = sizingFixes(finding, ctx);
    expect(fixes.length).toBeGreaterThan(0);
    // Every solve ran on the cell's block (RR3, QR3, QO3, RL3 and the rail's source): the whole circuit's solver was not asked.
    expect(wholeSolves()).toBe(0);
    const preferred = fixes.find((f) => f.preferred)!;
    expect(preferred.title).toMatch(/^Set RL3 to [\d.]+k \(E24\): QO3 → [\d.]+ µA, headroom [\d.]+ V$/);
    // The independent check: the netlist with the fix applied, analysed whole from scratch (every cell, the rail's
    // source carrying all of them), gives the current and headroom the title states to its three digits.
    const after = analyseNetlist(apply(text, preferred));
    const cell = after.structures.find((s) => s.devices.includes('QO3'))!;
    const current = titled(preferred.title, /QO3 → ([\d.]+) (µ|m|n)?A/);
    const headroom = titled(preferred.title, /headroom ([\d.]+) ()V/);
    expect(Math.abs(cell.solved!.iout['QO3']! - current) / current).toBeLessThan(0.005);
    expect(Math.abs(cell.headroom['QO3']! - headroom) / headroom).toBeLessThan(0.005);
    // The trade's rule the fix is built on (the configured 0.3 V margin beyond the forward-active edge, VBC ≤ 0): kept.
    expect(cell.headroom['QO3']!).toBeGreaterThanOrEqual(0.3);
    expect(after.findings.some((f) => f.code === 'mirror-output-out-of-region' && f.data?.['device'] === 'QO3')).toBe(false);
  });

  it('offer nothing and solve nothing for an output whose node connects to no load', () => {
    const { finding, ctx, wholeSolves } = setUp('QO4');
    expect(sizingFixes(finding, ctx)).toEqual([]);
    expect(wholeSolves()).toBe(0);
  });
});

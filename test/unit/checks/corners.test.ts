// Corner re-solves: the corner list, an output that leaves forward-active only at the low-supply/hot corner, headroom and spread findings.

import { describe, expect, it } from 'vitest';
import { resolveOptions, type AnalysisOptions } from '../../../shared-analysis/src/analysis';
import { cornerSpecs, runCorners } from '../../../shared-analysis/src/checks/corners';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { DcSolver, solveOperatingPoint } from '../../../shared-analysis/src/solve/dc';
import type { BjtRecord } from '../../../shared-analysis/src/solve/types';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import type { Structure } from '../../../shared-analysis/src/structures/types';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { solvedNetlist } from './solved-netlist';
import { MemoryWorkspace, type Finding } from '../../../shared-analysis/src/types';

const URI = '/c.cir';

/** Parses, elaborates, solves, recognises and runs the corners of one netlist. */
function run(netlist: string, options: AnalysisOptions = {}): { findings: Finding[]; structures: Structure[]; text: string } {
  const { circuit, solver, nominal, structures } = solvedNetlist(netlist, URI);
  const findings = runCorners({ circuit, solver, structures, options: resolveOptions(options), nominal });
  return { findings, structures, text: netlist };
}

/** The one helper: the codes of the corner findings for the device, and their messages' required fragments. */
function check(netlist: string, device: string, expected: { codes: string[]; says?: Record<string, string[]> }, options: AnalysisOptions = {}): Finding[] {
  const { findings, text } = run(netlist, options);
  const mine = findings.filter((f) => f.data?.['device'] === device);
  expect(mine.map((f) => f.code)).toEqual(expected.codes);
  for (const f of mine) {
    for (const frag of expected.says?.[f.code] ?? []) expect(f.message).toContain(frag);
    expect(f.message).not.toMatch(/NaN|undefined|Infinity/);
    // Located on the device's card.
    expect(text.slice(f.span.start, f.span.end).startsWith(device)).toBe(true);
  }
  return mine;
}

// An invented bias cell: a 1 mA current reference into a 1.5 kΩ divider feeds the mirror through R1,
// so IREF rises with temperature as VBE falls (about −2 mV/°C at constant current, Horowitz and Hill,
// 3rd ed., ch. 2), while the output's load hangs from a separate 2.2 V supply.
const cell = (rl: string): string => `sensor bias cell, output load from a 2.2 V rail
IREF 0 na DC 1m
RA na 0 1.5k
R1 na b 2k
Q1 b b 0 qn
Q2 out b 0 qn
VLOAD vload 0 DC 2.2
RL vload out ${rl}
.model qn npn (IS=1e-16 BF=100)
.end
`;

describe('cornerSpecs', () => {
  it('gives 3 × 3 × 3 − 1 = 26 corners for one supply source, without the nominal point', () => {
    const specs = cornerSpecs(resolveOptions({}), 27, ['V1']);
    expect(specs).toHaveLength(26);
    expect(specs.some((s) => s.supplyScale === 1 && s.temperatureC === 27 && s.betaScale === 1)).toBe(false);
    expect(new Set(specs.map((s) => s.label)).size).toBe(26);
    expect(specs[0].label).toBe('supply −5 %, −40 °C, beta ×0.5');
  });

  it('adds each source alone at ±tolerance when there are several, and stays bounded', () => {
    expect(cornerSpecs(resolveOptions({}), 27, ['V1', 'V2'])).toHaveLength(26 + 4);
    const many = Array.from({ length: 20 }, (_, i) => `V${i}`);
    expect(cornerSpecs(resolveOptions({}), 27, many)).toHaveLength(26 + 16);
  });

  it('drops the beta axis for a circuit without bipolar devices: 3 × 3 − 1 = 8', () => {
    expect(cornerSpecs(resolveOptions({}), 27, ['VDD'], { bipolar: false })).toHaveLength(8);
    // Nothing that moves with temperature: only the supply corners remain (every other row would repeat one of them).
    expect(cornerSpecs(resolveOptions({}), 27, ['VDD'], { bipolar: false, thermal: false }).map((c) => c.label)).toEqual(['supply −5 %', 'supply +5 %']);
  });

  it('adds slow and fast MOS process corners only when a setting sizes them and the circuit has MOSFETs: 3 × 3 × 3 − 1 = 26', () => {
    const on = resolveOptions({ corners: { processKpTolerance: 0.1, processVtoShift: 0.05 } });
    const specs = cornerSpecs(on, 27, ['VDD'], { bipolar: false, mos: true });
    expect(specs).toHaveLength(26);
    expect(specs.filter((s) => s.process === 'slow')).toHaveLength(9);
    expect(specs.find((s) => s.process === 'fast' && s.supplyScale === 1 && s.temperatureC === 27)?.label).toBe('fast MOS');
    expect(cornerSpecs(on, 27, ['VDD'], { bipolar: true, mos: false })).toHaveLength(26);
    expect(cornerSpecs(on, 27, ['VDD'], { bipolar: true, mos: false }).some((s) => s.process)).toBe(false);
    expect(cornerSpecs(resolveOptions({}), 27, ['VDD'], { bipolar: false, mos: true })).toHaveLength(8);
  });

  it('solves a slow corner below and a fast corner above nominal for a square-law mirror fed by a resistor', () => {
    // I = KP/2·(W/L)·(VGS − VTO)²: lower KP and higher VTO both lower the current (Shichman–Hodges).
    const net = `nmos mirror
VDD vdd 0 3.3
RREF vdd g 20k
M1 g g 0 0 nch W=10u L=1u
M2 out g 0 0 nch W=10u L=1u
RL vdd out 5k
.model nch nmos (KP=100u VTO=0.6)
.end
`;
    const { structures } = run(net, { corners: { processKpTolerance: 0.1, processVtoShift: 0.05 } });
    const corners = structures[0].corners;
    const slow = corners.find((c) => c.label === 'slow MOS')!;
    const fast = corners.find((c) => c.label === 'fast MOS')!;
    const root = parse(URI, net, { hasTitle: true });
    const nominal = solveOperatingPoint(elaborate(root, new MemoryWorkspace({ [URI]: net }), {}).circuit).op.devices['M2'] as { id: number };
    expect(slow.iout['M2']).toBeLessThan(Math.abs(nominal.id));
    expect(fast.iout['M2']).toBeGreaterThan(Math.abs(nominal.id));
  });

  it('drops levels equal to nominal', () => {
    expect(cornerSpecs(resolveOptions({ corners: { supplyTolerance: 0 } }), 27, ['V1'])).toHaveLength(8);
    expect(cornerSpecs(resolveOptions({ corners: { coldC: 27 } }), 27, ['V1'])).toHaveLength(17);
  });
});

describe('runCorners', () => {
  it('names the low-supply/hot corner where the output leaves forward-active', () => {
    const [f] = check(cell('6k'), 'Q2', {
      codes: ['corner-output-out-of-region', 'corner-current-spread'],
      says: { 'corner-output-out-of-region': ['forward-active at nominal', 'supply −5 %, 125 °C', 'past the VBC = 0 edge'] },
    });
    const corners = f.data!['corners'] as string[];
    expect(corners.length).toBeGreaterThan(0);
    for (const c of corners) {
      expect(c).toContain('supply −5 %');
      expect(c).toContain('125 °C');
    }
    expect(f.data!['headroom'] as number).toBeLessThan(0);
  });

  it('reports nothing at the corners for a load with room to spare', () =>
    check(cell('2k'), 'Q2', { codes: ['corner-current-spread'] }));

  it('reports low headroom when the output stays active but under the margin', () =>
    check(cell('5k'), 'Q2', {
      codes: ['corner-headroom-low', 'corner-current-spread'],
      says: { 'corner-headroom-low': ['stays forward-active at every corner', 'below the 0.3 V margin'] },
    }, { headroomMarginV: 0.3 }));

  it('reports low headroom alone when the output current stays within the spread limit', () => {
    // An invented mirror fed by an ideal 1 mA source: IREF does not move with temperature, and the output current moves
    // only by the base currents' share, 2/β (1 % to 4 % for β from 200 to 50; Gray and Meyer, "Analysis and Design of
    // Analog Integrated Circuits", ch. 4, the simple bipolar mirror, from memory). The collector sits about 0.4 V above
    // the base at nominal; VBE rises by about 2 mV/°C towards −40 °C (common practice), so the headroom drops under 0.3 V
    // there while VBC stays below 0.
    const net = `mirror fed by an ideal reference, output load from a 2.2 V rail
IREF 0 b DC 1m
Q1 b b 0 qn
Q2 out b 0 qn
VLOAD vload 0 DC 2.2
RL vload out 1.05k
.model qn npn (IS=1e-16 BF=100)
.end
`;
    check(net, 'Q2', { codes: ['corner-headroom-low'], says: { 'corner-headroom-low': ['stays forward-active at every corner', '−40 °C', 'below the 0.3 V margin'] } }, { headroomMarginV: 0.3 });
  });

  it('fills structure.corners with finite numbers, measured from one solve per corner', () => {
    const { structures } = run(cell('6k'));
    expect(structures).toHaveLength(1);
    const s = structures[0];
    expect(s.corners).toHaveLength(26);
    for (const c of s.corners) {
      expect(c.converged).toBe(true);
      for (const v of [c.iref, ...Object.values(c.iout), ...Object.values(c.headroom)]) expect(Number.isFinite(v)).toBe(true);
    }
    // The corner's output current equals a fresh, independent solve with the rail and temperature changed.
    const corner = s.corners.find((c) => c.label === 'supply −5 %, 125 °C')!;
    const root = parse(URI, cell('6k').replace('DC 2.2', 'DC 2.09'), { hasTitle: true });
    const { circuit } = elaborate(root, new MemoryWorkspace({}), {});
    const direct = solveOperatingPoint(circuit, { temperatureC: 125 });
    expect(corner.iout['Q2']).toBeCloseTo(Math.abs((direct.op.devices['Q2'] as BjtRecord).ic), 9);
    expect(corner.outOfRegion).toEqual(['Q2']);
  });

  // Source: Horowitz and Hill, 3rd ed., ch. 2 — VBE falls by about 2 mV/°C at constant current (common
  // practice), so with a resistor-fed reference IREF rises from cold to hot.
  it('orders the corner currents the way the VBE temperature coefficient says', () => {
    const { structures } = run(cell('2k'));
    const at = (label: string) => structures[0].corners.find((c) => c.label === label)!.iout['Q2'];
    expect(at('125 °C')).toBeGreaterThan(at('−40 °C'));
  });

  it('is deterministic', () => {
    const a = run(cell('6k')).findings;
    const b = run(cell('6k')).findings;
    expect(b).toEqual(a);
  });

  it('reports corners that do not converge once, and leaves them out of the checks', () => {
    const root = parse(URI, cell('6k'), { hasTitle: true });
    const { circuit } = elaborate(root, new MemoryWorkspace({}), {});
    const real = new DcSolver(circuit);
    const nominal = real.solve({});
    // A solver double that fails at the hot corners, as a circuit with a runaway at 125 °C would.
    const failingHot = {
      solve: (o: Parameters<DcSolver['solve']>[0] = {}) => {
        const r = real.solve(o);
        return o.temperatureC === 125 ? { ...r, op: { ...r.op, converged: false } } : r;
      },
    } as unknown as DcSolver;
    const structures = recogniseStructures(circuit);
    const findings = runCorners({ circuit, solver: failingHot, structures, options: resolveOptions({}), nominal });
    const notes = findings.filter((f) => f.code === 'corner-no-convergence');
    expect(notes).toHaveLength(1);
    expect(notes[0].message).toContain('did not converge at 9 of 26 corners');
    expect(structures[0].corners.filter((c) => !c.converged)).toHaveLength(9);
    // The saturating corners were all hot, so with them gone nothing is out of region.
    expect(findings.some((f) => f.code === 'corner-output-out-of-region')).toBe(false);
  });

  it('does nothing when corners are disabled', () => {
    expect(run(cell('6k'), { corners: { enabled: false } }).findings).toEqual([]);
  });
});

describe('which elements move with temperature', () => {
  it('counts junctions, FETs and resistors with a coefficient, and nothing else', async () => {
    const { movesWithTemperature } = await import('../../../shared-analysis/src/checks/corners');
    const base = { name: 'x', nodes: [1, 0], origin: { uri: 'u', span: { start: 0, end: 1 }, instances: [] } };
    expect(movesWithTemperature({ ...base, kind: 'R', resistance: 1e3 })).toBe(false);
    expect(movesWithTemperature({ ...base, kind: 'R', resistance: 1e3, tc1: 1e-3 })).toBe(true);
    expect(movesWithTemperature({ ...base, kind: 'V', dc: 1 })).toBe(false);
    expect(movesWithTemperature({ ...base, kind: 'T' })).toBe(false);
  });
});

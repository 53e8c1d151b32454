// Start-up of self-biased loops: the zero-current state found with and without a start-up path, at nominal and at the corners.

import { describe, expect, it } from 'vitest';
import type { AnalysisOptions } from '../../../shared-analysis/src/analysis';
import { analyse } from '../../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { BJT_CELL } from './self-biased-cells';

/** The one entry point: analyse netlist text and return the start-up findings and the loop structures' start-up records. */
function check(text: string, options: AnalysisOptions = {}) {
  const a = analyse({ uri: 't.cir', text }, new MemoryWorkspace({ 't.cir': text }), options);
  const warnings = a.findings.filter((f) => f.code === 'bias-loop-can-stay-off');
  return { a, warnings, loops: a.structures.filter((s) => s.startup) };
}

const MOS_CELL = (startup: string) => `an invented beta-multiplier reference
.model nch nmos (kp=100u vto=0.5)
.model pch pmos (kp=40u vto=-0.6)
VDD vdd 0 3.3
M1 n1 n1 0 0 nch w=10u l=1u
M2 p n1 s 0 nch w=40u l=1u
RS s 0 5k
M3 p p vdd vdd pch w=20u l=1u
M4 n1 p vdd vdd pch w=20u l=1u
${startup}
.end
`;

/** Thermal voltage kT/q at 27 °C (CODATA constants). */
const VT = (1.380649e-23 * 300.15) / 1.602176634e-19;

/**
 * Currents into each terminal of a transistor at the given node voltages, written here without the
 * project's device code: Ebers–Moll transport form for a BJT (Ebers and Moll, 1954; IS = 1e-16 A
 * and BR = 1 are the family's usual defaults, from memory), square law for a MOSFET (Shichman and
 * Hodges, 1968; zero below the threshold). Returns [node, current into the device] pairs.
 */
function terminalCurrents(card: string, v: (n: string) => number): [string, number][] {
  const f = card.trim().split(/\s+/);
  if (f[0].startsWith('Q')) {
    const [c, b, e] = [f[1], f[2], f[3]];
    const pnp = f[4] === 'qp';
    const area = Number((card.match(/area=(\d+)/) ?? [])[1] ?? 1);
    const bf = pnp ? 50 : 100;
    const s = pnp ? -1 : 1;
    const is = 1e-16 * area;
    const fe = Math.expm1((s * (v(b) - v(e))) / VT);
    const fc = Math.expm1((s * (v(b) - v(c))) / VT);
    const ic = s * (is * (fe - fc) - is * fc);
    const ib = s * ((is / bf) * fe + is * fc);
    return [[c, ic], [b, ib], [e, -ic - ib]];
  }
  const [d, g, src] = [f[1], f[2], f[3]];
  const pmos = f[5] === 'pch';
  const s = pmos ? -1 : 1;
  const kp = pmos ? 40e-6 : 100e-6;
  const vto = pmos ? 0.6 : 0.5;
  const w = Number(card.match(/w=(\d+)u/)![1]);
  const vov = s * (v(g) - v(src)) - vto;
  const vds = s * (v(d) - v(src));
  const id = vov <= 0 ? 0 : vds >= vov ? 0.5 * kp * w * vov * vov : kp * w * (vov - vds / 2) * vds;
  return [[d, s * id], [g, 0], [src, -s * id]];
}

/** The largest KCL imbalance at the given nodes of the netlist's transistors and resistors (A), at the given node voltages. */
function largestImbalance(text: string, volts: Record<string, number>, nodes: string[]): number {
  const v = (n: string) => (n === '0' ? 0 : volts[n]);
  const sum = new Map<string, number>();
  for (const line of text.split('\n')) {
    if (/^[QM]/.test(line)) for (const [n, i] of terminalCurrents(line, v)) sum.set(n, (sum.get(n) ?? 0) + i);
    const r = line.match(/^R\w*\s+(\S+)\s+(\S+)\s+(\S+)/);
    if (r) {
      const ohms = Number(r[3].replace(/meg$/, 'e6').replace(/k$/, 'e3'));
      const i = (v(r[1]) - v(r[2])) / ohms;
      sum.set(r[1], (sum.get(r[1]) ?? 0) + i);
      sum.set(r[2], (sum.get(r[2]) ?? 0) - i);
    }
  }
  return Math.max(...nodes.map((n) => Math.abs(sum.get(n) ?? 0)));
}

describe('self-biased loops at power-up', () => {
  it('a ΔVBE cell without a start-up path is flagged on its reference device, naming the state the solver chose', () => {
    const { a, warnings, loops } = check(BJT_CELL(''));
    expect(warnings).toHaveLength(1);
    const w = warnings[0];
    expect(w.severity).toBe('warning');
    // Located on Q1's card (line 5 of the netlist).
    const q1 = a.circuit!.elements.find((e) => e.name === 'Q1')!;
    expect(w.span).toEqual(q1.origin.span);
    expect(w.message).toMatch(/can rest at zero current at nominal supply and temperature/);
    expect(w.message).toMatch(/start-up resistor/);
    expect(w.message).toMatch(/start-up device/);
    // The solver's chosen state: the conducting one, with the reference current it carries.
    const solved = Math.abs((a.operatingPoint!.devices.Q1 as { ic: number }).ic);
    expect(solved).toBeGreaterThan(40e-6);
    expect(w.message).toContain('the conducting state the solver settled on');
    expect(loops.map((s) => s.id).sort()).toEqual(['ptat-cell:Q1', 'simple-mirror:QP1']);
    expect(loops[0].startup!.zeroStateNominal).toBe(true);
    expect(loops[0].startup!.solvedCurrent).toBeCloseTo(solved, 12);
    expect(w.related!.map((r) => r.message)).toEqual(['Q2: part of the self-biased loop', 'QP1: part of the self-biased loop', 'QP2: part of the self-biased loop']);
  });

  it('the same cell with a start-up resistor is not flagged, and says what starts it', () => {
    const { warnings, loops } = check(BJT_CELL('RSU vcc n1 2meg'));
    expect(warnings).toEqual([]);
    const st = loops[0].startup!;
    expect(st.zeroStateNominal).toBe(false);
    expect(st.zeroStateCorners).toEqual([]);
    expect(st.startupPath).toEqual({ node: 'n1', volts: 5, elements: ['RSU'], turnsOn: 'Q1' });
  });

  it('a beta-multiplier reference behaves the same way', () => {
    expect(check(MOS_CELL('')).warnings).toHaveLength(1);
    const withStartup = check(MOS_CELL('RSU vdd n1 5meg'));
    expect(withStartup.warnings).toEqual([]);
    expect(withStartup.loops[0].startup!.startupPath?.elements).toEqual(['RSU']);
  });

  it('a start-up path that only exists at nominal supply shows up at the low-supply corners', () => {
    // A start-up resistor into n1 from a divider tap whose voltage, at −5 % supply, no longer reaches one VGS:
    // the tap sits at 0.505 V nominal (just above VTO = 0.5 V) and 0.48 V at −5 %.
    const { warnings, loops } = check(MOS_CELL('RA vdd tap 5.5345k\nRB tap 0 1k\nRSU tap n1 1meg'));
    const st = loops[0].startup!;
    expect(st.zeroStateNominal).toBe(false);
    expect(st.zeroStateCorners.length).toBeGreaterThan(0);
    expect(st.zeroStateCorners.every((c) => c.includes('supply −5 %'))).toBe(true);
    expect(warnings).toHaveLength(1);
    expect(warnings[0].message).toMatch(/at supply −5 %.*\(not at nominal\)/);
  });

  for (const [name, cell, resistor, ref] of [
    ['ΔVBE cell', BJT_CELL, 'RSU vcc n1 2meg', 'Q1'],
    ['beta multiplier', MOS_CELL, 'RSU vdd n1 5meg', 'M1'],
  ] as const) {
    it(`the ${name}'s all-off state: a zero-current solution without a start-up resistor, solved into the nominal state with one`, () => {
      // Without: the recorded all-off state balances every loop node's KCL (computed here) to far
      // below the loop's current, so zero current satisfies the circuit; nothing is solved from it.
      const bare = check(cell(''));
      const st = bare.loops[0].startup!;
      const rest = st.allOffStart!.restNodes;
      const loopNodes = Object.keys(rest).filter((n) => n !== '0' && !/^v(cc|dd)$/.test(n));
      expect(loopNodes.length).toBeGreaterThanOrEqual(2);
      expect(largestImbalance(cell(''), rest, loopNodes)).toBeLessThan(1e-6 * st.solvedCurrent!);
      expect(st.allOffStart!.solved).toBeUndefined();
      // The warning names the state the solver chose: the conducting one.
      expect(bare.warnings[0].message).toContain(`settled on (`);

      // With: the same all-off start leaves the resistor's current unbalanced at n1 (so zero current
      // is no solution), and the whole circuit solved from it reaches the nominal operating point.
      const text = cell(resistor);
      const started = check(text);
      const s2 = started.loops[0].startup!;
      const r2 = s2.allOffStart!;
      expect(largestImbalance(text, r2.restNodes, ['n1'])).toBeGreaterThan(1e3 * 1e-6 * s2.solvedCurrent!);
      expect(r2.solved!.converged).toBe(true);
      const nominal = started.a.operatingPoint!.devices[ref] as { ic?: number; id?: number };
      expect(r2.solved!.current).toBeCloseTo(Math.abs(nominal.ic ?? nominal.id!), 9);
      // And the solved state is an operating point: KCL at the loop nodes balances (computed here).
      const solvedNodes = { ...r2.solved!.nodes };
      expect(largestImbalance(text, solvedNodes, ['n1', 'p'])).toBeLessThan(1e-3 * s2.solvedCurrent!);
    });
  }

  it('checks the ΔVBE cell at every corner of the corner table, beta corners included, and reports the state each corner solve chose', () => {
    const { a, warnings, loops } = check(BJT_CELL(''));
    const st = loops[0].startup!;
    const ptat = a.structures.find((s) => s.kind === 'ptat-cell')!;
    // The same corners as the corner table (supply × temperature × beta), none left out: the zero state exists at all of them.
    expect(st.corners!.map((c) => c.label)).toEqual(ptat.corners.map((c) => c.label));
    expect(st.corners!.some((c) => /beta ×/.test(c.label))).toBe(true);
    expect(st.zeroStateCorners).toEqual(ptat.corners.map((c) => c.label));
    // The chosen state at each corner is the corner table's own solve (conducting: far above the 1 nA rest floor).
    for (const c of st.corners!) {
      const row = ptat.corners.find((x) => x.label === c.label)!;
      expect(c.zeroState).toBe(true);
      expect(c.solvedCurrent).toBe(row.iref);
      expect(c.solvedCurrent!).toBeGreaterThan(1e-6);
    }
    expect(warnings[0].message).toContain(`(and at ${ptat.corners.length} of the ${ptat.corners.length} corners)`);
  });

  it('with a start-up resistor the cell is not flagged at any corner, and an all-off start at the hardest corner reaches that corner’s state', () => {
    const text = BJT_CELL('RSU vcc n1 2meg');
    const { a, warnings, loops } = check(text);
    expect(warnings).toEqual([]);
    const st = loops[0].startup!;
    const ptat = a.structures.find((s) => s.kind === 'ptat-cell')!;
    expect(st.corners!.length).toBe(ptat.corners.length);
    expect(st.corners!.every((c) => !c.zeroState)).toBe(true);
    // The hardest corner: the lowest supply at the coldest temperature, where the resistor delivers least and VBE is highest (common practice).
    const hard = st.allOffStartCorner!;
    expect(hard.label).toBe('supply −5 %, −40 °C');
    expect(hard.solved.converged).toBe(true);
    // Started from all-off there, the circuit reaches the state the corner table's solve (warm-started from nominal) shows.
    const row = ptat.corners.find((x) => x.label === hard.label)!;
    expect(Math.abs(hard.solved.current - row.iref)).toBeLessThan(1e-6 * row.iref);
    // An independent solve of the same corner from the solver's own cold start agrees too: the conducting state is the only one.
    const cold = check(text.replace('VCC vcc 0 5', 'VCC vcc 0 4.75'), { temperatureC: -40, corners: { enabled: false } });
    const q1 = cold.a.operatingPoint!.devices.Q1 as { ic: number };
    expect(Math.abs(q1.ic)).toBeGreaterThan(0.9 * row.iref);
    expect(Math.abs(q1.ic)).toBeLessThan(row.iref);
  });

  it('with the corner solves left for later (an editor’s first pass), the start-up check still covers the corners, without their chosen states', () => {
    const { warnings, loops } = check(BJT_CELL(''), { corners: { enabled: false } });
    expect(warnings).toHaveLength(1);
    const st = loops[0].startup!;
    expect(st.zeroStateNominal).toBe(true);
    expect(st.corners!.length).toBe(26);
    expect(st.zeroStateCorners).toEqual(st.corners!.map((c) => c.label));
    expect(st.corners!.every((c) => c.solvedCurrent === undefined)).toBe(true);
  });

  it('a slow MOS process corner that lifts the threshold above the start-up tap shows up at the process corners only', () => {
    // The tap sits at 3.3 V × 1k/6.5345k = 0.505 V; VTO = 0.5 V nominal, 0.52 V at the slow corner (shift 20 mV), 0.48 V fast.
    const { warnings, loops } = check(MOS_CELL('RA vdd tap 5.5345k\nRB tap 0 1k\nRSU tap n1 1meg'), { corners: { processVtoShift: 0.02 } });
    const st = loops[0].startup!;
    expect(st.zeroStateNominal).toBe(false);
    expect(st.zeroStateCorners).toContain('slow MOS');
    expect(st.zeroStateCorners.some((c) => c.includes('fast MOS') && !c.includes('supply'))).toBe(false);
    expect(st.zeroStateCorners.filter((c) => !c.includes('supply −5 %')).every((c) => c.includes('slow MOS'))).toBe(true);
    expect(warnings).toHaveLength(1);
  });

  it('mirrors that are not in a loop get no start-up record and no warning', () => {
    const { warnings, loops } = check(`an invented two-stage bias chain
.model qn npn
.model qp pnp
VCC vcc 0 5
R1 vcc a 10k
Q1 a a 0 qn
Q2 b a 0 qn
QP1 b b vcc qp
QP2 out b vcc qp
RL out 0 1k
.end
`);
    expect(warnings).toEqual([]);
    expect(loops).toEqual([]);
  });
});

describe('a self-biased loop is not an unfed reference', () => {
  // The loop's closing device sits on the reference node and feeds it: `reference-unfed` never speaks of a loop (the
  // zero-current state it can rest in is `bias-loop-can-stay-off`'s to report, whose message says so).
  it.each([
    ['the beta multiplier', MOS_CELL('')],
    ['the ΔVBE cell', BJT_CELL('')],
  ])('%s without a start-up path', (_, text) => {
    const { a } = check(text, { corners: { enabled: false } });
    expect(a.structures.length).toBeGreaterThan(0);
    expect(a.findings.filter((f) => f.code === 'reference-unfed')).toEqual([]);
  });
});

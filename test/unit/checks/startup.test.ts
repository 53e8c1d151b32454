// Start-up of self-biased loops: the zero-current state found with and without a start-up path, at nominal and at the corners.

import { describe, expect, it } from 'vitest';
import { analyse } from '../../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

/** The one entry point: analyse netlist text and return the start-up findings and the loop structures' start-up records. */
function check(text: string) {
  const a = analyse({ uri: 't.cir', text }, new MemoryWorkspace({ 't.cir': text }), {});
  const warnings = a.findings.filter((f) => f.code === 'bias-loop-can-stay-off');
  return { a, warnings, loops: a.structures.filter((s) => s.startup) };
}

const BJT_CELL = (startup: string) => `an invented ΔVBE cell
.model qn npn (bf=100)
.model qp pnp (bf=50)
VCC vcc 0 5
Q1 n1 n1 0 qn
Q2 p n1 x qn area=8
R x 0 1k
QP1 p p vcc qp
QP2 n1 p vcc qp
${startup}
.end
`;

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

// Display formatting of quantities: zero of either sign reads as 0, and zero currents in hovers and inlay hints never show a minus sign.

import { describe, expect, it } from 'vitest';
import { formatNumber, formatPercent, formatQuantity } from '../../../shared-analysis/src/view/format';
import { hoverAt } from '../../../shared-analysis/src/features/hover';
import { inlayHints } from '../../../shared-analysis/src/features/inlay';
import { analyseText } from './fixture';

/** The one helper of this feature: the display text of `value` in each formatter. */
function check(value: number, expected: { quantity: string; number: string; percent: string }, unit = 'V'): void {
  expect(formatQuantity(value, unit)).toBe(expected.quantity);
  expect(formatNumber(value)).toBe(expected.number);
  expect(formatPercent(value)).toBe(expected.percent);
}

describe('zero in display text', () => {
  it('prints negative zero as 0', () => {
    // Source: IEEE 754-2019 §6.3 — −0 compares equal to +0; a reader sees no sign on zero (common practice).
    check(-0, { quantity: '0 V', number: '0', percent: '0 %' });
    check(-1 * 0, { quantity: '0 A', number: '0', percent: '0 %' }, 'A');
  });
  it('keeps the sign of small non-zero values', () => {
    check(-0.0004, { quantity: '−400 µV', number: '−0.0004', percent: '−0.04 %' });
    check(-2.5, { quantity: '−2.5 V', number: '−2.5', percent: '−250 %' });
  });
  it('shows no −0 in hovers and inlay hints of a netlist with zero-current branches', () => {
    // A grounded resistor with both ends at 0 V and a 0 A source carry exactly zero current (Ohm's law).
    const text = 't\nV1 a 0 DC 5\nR1 a b 1k\nR2 b 0 1k\nI1 c 0 DC 0\nR3 c 0 1k\nR4 0 d 1k\nR5 d 0 2k\n.end\n';
    const a = analyseText(text);
    const shown: string[] = inlayHints(a, '/t/main.cir', { start: 0, end: text.length }, 'full').map((h) => `${h.label} ${h.tooltip ?? ''}`);
    for (let off = 0; off < text.length; off++) {
      const h = hoverAt(a, '/t/main.cir', off);
      if (h) shown.push(h.markdown);
    }
    expect(shown.length).toBeGreaterThan(0);
    for (const t of shown) expect(t).not.toMatch(/[−-]0(?:\.0*)?\s*(?:[µmnpfkM]?[VAW%Ω]|$)/);
  });
});

import { formatDifference, formatHeadroom, formatRange, regionBeyondEdge, formatShare, formatSignedQuantity, formatTargetState } from '../../../shared-analysis/src/view/format';

describe('the view formatting rules (shared-analysis/src/view/format.ts)', () => {
  it('keeps three significant figures with SI prefixes, as engineering notation does (IEC 80000-1 prefixes)', () => {
    expect(formatQuantity(0.000501234, 'A')).toBe('501 µA');
    expect(formatQuantity(8200, 'Ω')).toBe('8.2 kΩ');
    // Volts between 0.1 V and 1 V stay in volts (common practice for junction voltages).
    expect(formatQuantity(0.6789, 'V')).toBe('0.679 V');
    expect(formatQuantity(0.0597, 'V')).toBe('59.7 mV');
    expect(formatQuantity(1e30, 'Ω')).toBe('∞ Ω');
    expect(formatQuantity(NaN, 'A')).toBe('not available');
    // Below the 1 pA floor a current is noise (docs/DEVICE-MODELS.md "Regions").
    expect(formatQuantity(3e-18, 'A')).toBe('≈ 0 A');
    expect(formatSignedQuantity(0.21, 'V')).toBe('+0.21 V');
    expect(formatSignedQuantity(-0.21, 'V')).toBe('−0.21 V');
  });
  it('writes percentages with at most three figures and no exponent', () => {
    expect(formatPercent(2.8e-9)).toBe('≈ 0 %');
    expect(formatPercent(-0.088)).toBe('−8.8 %');
    expect(formatShare(-0.088)).toBe('8.8 %');
    expect(formatPercent(88900)).toBe('+8890000 %');
  });
  it('reads signed quantities as words, never as a double negative', () => {
    // Headroom beyond the edge of the active region: positive inside, negative past the edge.
    expect(formatHeadroom(-0.236, 'npn')).toBe('0.236 V into saturation');
    expect(formatHeadroom(-0.236, 'pmos')).toBe('0.236 V into triode');
    expect(formatHeadroom(8.97, 'pnp')).toBe('8.97 V clear of saturation');
    expect(formatHeadroom(0.0004, 'nmos')).toBe('at the edge of triode');
    for (const h of [-5, -0.3, -0.01, 0.01, 3]) expect(formatHeadroom(h, 'npn')).not.toMatch(/[−-]|short of/);
    // A JFET past VDS = VGS − VP is in its linear region, the engine's own name for it (docs/DEVICE-MODELS.md), never "triode".
    expect(formatHeadroom(-0.3, 'njf')).toBe('0.3 V into the linear region');
    expect(formatHeadroom(2, 'pjf')).toBe('2 V clear of the linear region');
    expect(formatHeadroom(0.0002, 'njf')).toBe('at the edge of the linear region');
    expect(regionBeyondEdge('pjf')).toBe('the linear region');
    expect(regionBeyondEdge('npn')).toBe('saturation');
    expect(regionBeyondEdge('nmos')).toBe('triode');
    // A technology the view does not know (a structure read back from a newer engine's JSON) gets no region name it might have wrong.
    expect(formatHeadroom(-0.3, 'igbt')).toBe('0.3 V past the edge of its active region');
    expect(formatHeadroom(1.5, 'igbt')).toBe('1.5 V inside its active region');
    expect(formatHeadroom(0, 'igbt')).toBe('at the edge of its active region');
    expect(regionBeyondEdge('igbt')).not.toMatch(/saturation|triode|linear/);
    // (501 − 549)/549 = −8.74 % (arithmetic in the test).
    expect(formatDifference(549e-6, 501e-6)).toBe('8.7 % below the estimate');
    expect(formatDifference(100e-6, 103.1e-6)).toBe('3.1 % above the estimate');
    expect(formatDifference(101e-6, 101e-6 * (1 + 1e-9))).toBe('matches the estimate');
    // A zero or subnormal estimate has no finite relative difference (1.65e-12 / 1e-320 overflows a
    // double; fuzz case 919681 of seed 20261202 printed "Infinity % above the estimate").
    expect(formatDifference(0, 1.65e-12)).toBe('not comparable with the estimate');
    expect(formatDifference(1e-320, 1.65e-12)).toBe('not comparable with the estimate');
    expect(formatDifference(Number.NaN, 1e-6)).toBe('not comparable with the estimate');
    expect(formatRange(555e-6, 452e-6, 'A')).toBe('452 µA to 555 µA');
  });
  it('says where a current stands against its target', () => {
    // 501 µA against 450 µA ±2 %: (501 − 450)/450 = +11.3 %, outside the band.
    expect(formatTargetState(501e-6, 450e-6, 0.02)).toEqual({ met: false, text: '11 % above target 450 µA ±2 %' });
    expect(formatTargetState(455e-6, 450e-6, 0.02)).toEqual({ met: true, text: 'on target 450 µA ±2 %' });
    // 1 µA against a subnormal 1e-320 A target: the ratio in per cent would overflow to Infinity.
    const subnormal = formatTargetState(1e-6, 1e-320, 0.1);
    expect(subnormal.met).toBe(false);
    expect(subnormal.text).toMatch(/^far above target /);
  });
});

// Checks how the target-current input box reads engineering notation and what it says about bad input.
import { describe, expect, it } from 'vitest';
import { readTargetCurrent } from '../../../client/src/current-input';

/** Checks one typed text: the amperes it reads as, or a message matching the pattern. */
function check(text: string, expected: number | RegExp): void {
  const r = readTargetCurrent(text);
  if (typeof expected === 'number') {
    expect(r.ok, JSON.stringify(r)).toBe(true);
    if (r.ok) expect(r.amps).toBeCloseTo(expected, 15);
  } else {
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.message).toMatch(expected);
  }
}

describe('target current input', () => {
  // Source: netlist convention (common practice) — M is milli, U micro, MEG mega; unit letters follow the suffix.
  it('reads suffixes and the ampere unit', () => {
    check('250u', 250e-6);
    check('1.2mA', 1.2e-3);
    check('1.2 mA', 1.2e-3);
    check('  40uA ', 40e-6);
    check('2.5e-4', 2.5e-4);
    check('100nA', 100e-9);
    check('0.001', 1e-3);
    check('750µA', 750e-6);
  });

  it('reports how the value reads back', () => {
    const r = readTargetCurrent('1.2mA');
    expect(r.ok && r.readsAs).toBe('1.2 mA');
  });

  it('refuses empty, non-numeric, non-positive and non-current input with a reason', () => {
    check('', /Type the current/);
    check('abc', /not a number/);
    check('4m7', /resistor-marking style.*4\.7m/);
    check('0', /greater than zero/);
    check('-1m', /greater than zero/);
    check('1.2mV', /`V`, which is not a current unit/);
    check('1meg', /far beyond a bias current/);
  });
});

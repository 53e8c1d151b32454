// Checks which element the client's commands pick from the cursor line and the server's list of outputs.
import { describe, expect, it } from 'vitest';
import { elementAtLine, isResistorName, outputsMatching } from '../../../client/src/targets';

/** Checks the element chosen with the cursor on the line marked `|` of an inline netlist. */
function check(marked: string, expected: string | undefined): void {
  const lines = marked.split('\n');
  const line = lines.findIndex((l) => l.includes('|'));
  const clean = lines.map((l) => l.replace('|', ''));
  expect(elementAtLine((n) => clean[n] ?? '', line)).toBe(expected);
}

describe('element under the cursor', () => {
  it('takes the card name wherever the cursor is on an element line', () => {
    check('RR|EF vcc ref {rref}', 'RREF');
    check('RREF vcc r|ef {rref}', 'RREF');
    check('  X1.Q2 a b c|', 'X1.Q2');
  });

  it('takes the card a continuation line belongs to', () => {
    check('MOUT out g vdd vdd PCORE\n+ W=40u\n+ L=2|u', 'MOUT');
  });

  it('gives nothing on comment and dot-card lines, or a continuation with no card', () => {
    check('* RREF sets the |current', undefined);
    check('.model Q|SIG NPN', undefined);
    check('.model QSIG NPN\n+ BF=1|60', undefined);
    check('+ W=1|0u', undefined);
    check('|', undefined);
  });

  // Source: netlist convention (common practice) — the first letter of an element name gives its kind; R is a resistor.
  it('recognises resistor names by their first letter', () => {
    expect(isResistorName('RREF')).toBe(true);
    expect(isResistorName('rset')).toBe(true);
    expect(isResistorName('Q1')).toBe(false);
    expect(isResistorName(undefined)).toBe(false);
  });
});

describe('outputs for a device name', () => {
  const outputs = [
    { device: 'Q2', node: 'exc' },
    { device: 'Q3', node: 'tail' },
    { device: 'XADC1.MOUT', node: 'adcbias' },
    { device: 'XADC2.MOUT', node: 'adcref' },
  ];

  it('prefers the exact name, case-insensitively', () => {
    expect(outputsMatching(outputs, 'q3').map((o) => o.device)).toEqual(['Q3']);
  });

  it('maps a device inside a subcircuit definition to all its instances', () => {
    expect(outputsMatching(outputs, 'MOUT').map((o) => o.device)).toEqual(['XADC1.MOUT', 'XADC2.MOUT']);
  });

  it('finds nothing for a device that is not an output', () => {
    expect(outputsMatching(outputs, 'Q1')).toEqual([]);
    expect(outputsMatching(outputs, 'OUT')).toEqual([]);
  });
});

// Which .net files the extension claims: SPICE-style netlists by their first cards, never another tool's netlist format.
// Every sample is written for this test; the other formats are generic shapes (s-expressions, XML, bracketed part lists,
// section-marked pin lists), not files of any particular program.

import { describe, expect, it } from 'vitest';
import { isUnclaimedNetFile, readsAsSpiceNetlist } from '../../../client/src/net-sniff';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';

/** The one helper: each text must read (or not) as a SPICE-style netlist. */
function check(expected: boolean, ...texts: string[]): void {
  for (const t of texts) expect(readsAsSpiceNetlist(t), JSON.stringify(t.slice(0, 60))).toBe(expected);
}

describe('reading a .net file as a SPICE netlist by its first cards', () => {
  it('claims a title line followed by element and dot cards, with comments, blank lines and continuations between', () => {
    check(
      true,
      'Bias cell for the sensor\nVCC vcc 0 DC 5\nR1 vcc b 4.3k\nQ1 b b 0 qn\n.model qn npn (IS=1e-16)\n.end\n',
      '* exported bias cell\n\n* another comment\n.include "models.lib"\nX1 in out vdd 0 amp\n.end\n',
      'Title\r\nM1 d g s b nch W=2u\r\n+ L=1u\r\nV1 d 0 1.8\r\n',
      '\uFEFFLadder\n; a comment\nR1 a b 1k\nR2 b 0 1k\n',
      // A netlist of only a title and one card.
      'One resistor\nR1 a 0 1k\n',
    );
  });

  it('leaves alone files whose first line opens another format', () => {
    check(
      false,
      '(board-netlist (format 2)\n  (parts (part (ref R1) (value 10k))))\n',
      '<?xml version="1.0"?>\n<netlist>\n  <net name="GND"/>\n</netlist>\n',
      '{ "nets": [ { "name": "GND", "pins": ["R1.2"] } ] }\n',
      '[\nR1\nRES-0805\n10k\n]\n(\nGND\nR1-2\n)\n',
      '%netlist export\nR1 a b 1k\n',
    );
  });

  it('leaves alone pin lists and part lists whose lines are not cards with enough fields for their letter', () => {
    check(
      false,
      // A section-marked part list: "R1 RES0805" has one field where a resistor card has three.
      'BOARD NETLIST\n*PARTS*\nR1 RES0805\nC1 CAP0603\n*NETS*\nGND R1.2 C1.2\n',
      // Net name then pins: "GND R1.2 C1.2" would be a G card, which needs five fields.
      'pin list\nGND R1.2 C1.2\nVCC R1.1 U1.8\n',
      // Words, not cards.
      'Readme\nThis file lists the connections.\n',
      // A continuation before any card.
      'Title\n+ R1 a b 1k\n',
    );
  });

  it('leaves alone an empty file and a title alone (nothing to read it by)', () => {
    check(false, '', 'Only a title\n', 'Title\n\n* just comments\n');
  });

  it('reads only the first lines', () => {
    // Sixty blank lines push the first card out of reach: nothing decides, so the file is left alone.
    check(false, `Title\n${'\n'.repeat(60)}R1 a b 1k\n`);
  });
});

describe('which files are read to decide', () => {
  it('reads only .net files that opened as plain text, so another extension that claims .net keeps them', () => {
    expect(isUnclaimedNetFile({ languageId: 'plaintext', uri: { path: '/w/board.NET' } })).toBe(true);
    expect(isUnclaimedNetFile({ languageId: 'pcb-netlist', uri: { path: '/w/board.net' } })).toBe(false);
    expect(isUnclaimedNetFile({ languageId: 'plaintext', uri: { path: '/w/notes.txt' } })).toBe(false);
  });

  it('does not claim .net by extension in package.json, and activates on plain text to read such files', () => {
    const pkg = JSON.parse(readFileSync(join(__dirname, '../../../package.json'), 'utf8'));
    const netlist = pkg.contributes.languages.find((l: { id: string }) => l.id === 'netlist');
    expect(netlist.extensions).not.toContain('.net');
    expect(netlist.extensions).toEqual(expect.arrayContaining(['.cir', '.sp']));
    expect(pkg.activationEvents).toContain('onLanguage:plaintext');
  });
});

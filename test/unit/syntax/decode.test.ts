// The one decoding of netlist files the language server and the CLI share: byte-order marks, UTF-16, Windows-1252, Ctrl-Z.
//
// Byte values: the UTF-8 and UTF-16 byte-order marks (EF BB BF, FF FE, FE FF) and the UTF-8 forms of
// µ (C2 B5) and Ω (CE A9) are from the Unicode Standard; the Windows-1252 code page maps 0xB5 to µ
// (as Latin-1 does) and 0x80 to €, 0x96 to an en dash (from memory, checked against the mapping
// table's well-known entries). Ctrl-Z is 0x1A, the old end-of-file marker (common practice).

import { describe, expect, it } from 'vitest';
import { decodeNetlist } from '../../../shared-analysis/src/syntax/decode';

const bytes = (...xs: (number | string)[]): Uint8Array =>
  new Uint8Array(xs.flatMap((x) => (typeof x === 'number' ? [x] : [...Buffer.from(x, 'latin1')])));

describe('decodeNetlist', () => {
  it('reads plain UTF-8, with µ and Ω', () => {
    expect(decodeNetlist(bytes('R1 a 0 4.7k', 0xce, 0xa9, '\nC1 a 0 1', 0xc2, 0xb5))).toEqual({ text: 'R1 a 0 4.7kΩ\nC1 a 0 1µ', encoding: 'utf-8' });
  });

  it('drops a UTF-8 byte-order mark', () => {
    expect(decodeNetlist(bytes(0xef, 0xbb, 0xbf, 'title\nR1 a 0 1k'))).toEqual({ text: 'title\nR1 a 0 1k', encoding: 'utf-8 with BOM' });
  });

  it('reads UTF-16 in either byte order after its byte-order mark', () => {
    const le = Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from('t\r\nC1 a 0 1µ\r\n', 'utf16le')]);
    expect(decodeNetlist(new Uint8Array(le))).toEqual({ text: 't\r\nC1 a 0 1µ\r\n', encoding: 'utf-16le' });
    const be = Buffer.from('t\nR1 a 0 2kΩ', 'utf16le').swap16();
    expect(decodeNetlist(new Uint8Array(Buffer.concat([Buffer.from([0xfe, 0xff]), be])))).toEqual({ text: 't\nR1 a 0 2kΩ', encoding: 'utf-16be' });
  });

  it('reads bytes that are not valid UTF-8 as Windows-1252', () => {
    expect(decodeNetlist(bytes('C1 a 0 10', 0xb5, '\n* ', 0x80, ' 5 ', 0x96, ' cheap'))).toEqual({ text: 'C1 a 0 10µ\n* € 5 – cheap', encoding: 'windows-1252' });
  });

  it('ignores a Ctrl-Z at the end, with or without a line break around it', () => {
    expect(decodeNetlist(bytes('R1 a 0 1k\n', 0x1a)).text).toBe('R1 a 0 1k\n');
    expect(decodeNetlist(bytes('R1 a 0 1k', 0x1a, '\r\n')).text).toBe('R1 a 0 1k');
    expect(decodeNetlist(bytes('* keep ', 0x1a, ' inside\n')).text).toBe('* keep \u001a inside\n');
  });
});

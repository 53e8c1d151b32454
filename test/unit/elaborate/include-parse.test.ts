// A re-analysis takes the parse of an included file whose text did not change from the last analysis, and
// parses it again when it changed; the analysis is the same as one that parsed everything afresh.

import { describe, expect, it } from 'vitest';
import { analyse } from '../../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { parse } from '../../../shared-analysis/src/syntax/parser';

// An invented model library and a netlist that includes it.
const LIB = (bf: number) => `* invented models\n.model QLIB NPN (IS=3e-15 BF=${bf} VAF=70)\n.model DLIB D (IS=1e-14)\n`;
const MAIN = (rref: string) => `include reuse\n.include lib.mod\nVCC vcc 0 9\nRREF vcc ref ${rref}\nQ1 ref ref 0 QLIB\nQ2 out ref 0 QLIB\nRL vcc out 2k\n.end\n`;

function run(main: string, lib: string) {
  return analyse({ uri: '/t/main.cir', text: main }, new MemoryWorkspace({ '/t/main.cir': main, '/t/lib.mod': lib }), { corners: { enabled: false } });
}

describe('parses of included files', () => {
  it('are taken from the last analysis when the file is unchanged, and the result is the same as parsing afresh', () => {
    const first = run(MAIN('8.2k'), LIB(120));
    const second = run(MAIN('9.1k'), LIB(120));
    expect(second.documents['/t/lib.mod']).toBe(first.documents['/t/lib.mod']);
    // The kept parse is what parsing the text now gives.
    expect(second.documents['/t/lib.mod']).toEqual(parse('/t/lib.mod', LIB(120), { hasTitle: false }));
    // And the analysis is that of a library parsed afresh (its text differs by a trailing comment only, so it is not kept).
    const fresh = run(MAIN('9.1k'), `${LIB(120)}* end of the library\n`);
    expect(fresh.documents['/t/lib.mod']).not.toBe(second.documents['/t/lib.mod']);
    expect(second.findings).toEqual(fresh.findings);
    expect(second.operatingPoint!.nodes).toEqual(fresh.operatingPoint!.nodes);
  });

  it('are made again when the file changed', () => {
    const first = run(MAIN('8.2k'), LIB(120));
    const changed = run(MAIN('8.2k'), LIB(60));
    expect(changed.documents['/t/lib.mod']).not.toBe(first.documents['/t/lib.mod']);
    // β halved: the output current of the mirror moves (IOUT = IREF / (1 + 2/β), the simple-mirror relation).
    expect(changed.operatingPoint!.devices['Q2']).not.toEqual(first.operatingPoint!.devices['Q2']);
    expect(changed.documents['/t/lib.mod']!.text).toContain('BF=60');
  });
});

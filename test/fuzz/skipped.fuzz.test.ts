// Property test: inserting any skipped card or block anywhere between cards never changes the operating point.
//
// The skipped cards and blocks are those the README's dialect section lists as skipped (analysis,
// output and initial-condition cards, script and data blocks, comment forms); their insides are
// written to look like elements, assignments and broken syntax, so a reading that leaks shows up
// as a changed bias point or a new finding. The base netlists are invented scenarios. Fixed seed.

import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { analyse } from '../../shared-analysis/src/service';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { parse } from '../../shared-analysis/src/syntax/parser';

const SEED = Number(process.env.QPOINT_FUZZ_SEED ?? 20261202);
const ROOT = '/w/top.cir';

const BASES = [
  `NPN mirror from a 12 V rail
.param rref=11k
VCC vcc 0 12
RREF vcc ref {rref}
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 4.7k
.model QN NPN (IS=1e-15 BF=150 VAF=90)
.end
`,
  `PMOS mirror with a subcircuit leg
VDD vdd 0 5
.subckt leg d g s w=20u
M1 d g s s PM W={w} L=2u
.ends
X1 ref ref vdd leg
X2 out ref vdd leg w=40u
RREF ref 0 20k
RL out 0 5k
.model PM PMOS (VTO=-0.7 KP=40u LAMBDA=0.02)
`,
  `Divider and diode
V1 in 0 9
R1 in a 2.2k
+ M=1
D1 a k 1N4148
R2 k 0 1k
.model 1N4148 D (IS=2.5n N=1.75)
`,
];

/** Skipped cards and blocks with insides that would change the circuit if they were read. */
const SKIPPED = [
  '.control\nop\nif v(out) > 0.5\n  let R1 = 0.001\nend\nR9 out 0 1\nV9 vcc 0 0\n.endc',
  '.CONTROL\nalter R1 = 1\nrun\n.ENDC',
  '.data values\n+ rref 1k 2k\nR7 out 0 1\n.enddata',
  '.tran 1n 10u 0 1n uic',
  '.meas tran tr TRIG v(out) VAL=0.5 RISE=1 TARG v(out) VAL=2 RISE=1',
  '.meas dc vx when v(out)=2',
  '.measure ac gain max vdb(out) = broken (',
  '.ic v(out)=1 v(ref)=0.7',
  '.nodeset v(out)=3',
  '.print dc v(out) i(VCC)',
  '.plot tran v(out)',
  '.probe v(out)',
  '.save all @q1[ic]',
  '.four 1k v(out)',
  '.ac dec 10 1 1g',
  '.dc VCC 0 12 0.1',
  '.noise v(out) VCC dec 10 1 1meg',
  '.tf v(out) VCC',
  '.backanno',
  '.prot\n.unprot',
  '.width out=80',
  '$ a comment in the dollar form R1 a b 1',
  '// a comment in the slash form R1 a b 1',
  '* a starred comment',
];

/** Offsets where a new card may go: the start of every card after the title (so never inside a block or before a `+` line), and the end of the text before `.end`. */
function boundaries(text: string): number[] {
  const doc = parse(ROOT, text, { hasTitle: true });
  const out: number[] = [];
  for (const card of doc.cards) {
    if (card.kind === 'title') continue;
    // A card's start is at its first non-blank character; insert at the start of its line.
    out.push(text.lastIndexOf('\n', card.span.start - 1) + 1);
    if (card.kind === 'end') return out;
  }
  out.push(text.length);
  return out;
}

function solve(text: string): Analysis {
  return analyse({ uri: ROOT, text }, new MemoryWorkspace({ [ROOT]: text }), { corners: { enabled: false } });
}

describe('skipped cards and blocks', () => {
  it('never change the operating point or the findings, wherever they are inserted', () => {
    const reference = BASES.map((b) => solve(b));
    for (const r of reference) expect(r.operatingPoint?.converged).toBe(true);
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: BASES.length - 1 }),
        fc.array(fc.tuple(fc.nat(), fc.integer({ min: 0, max: SKIPPED.length - 1 })), { minLength: 1, maxLength: 4 }),
        (which, inserts) => {
          let text = BASES[which]!;
          for (const [at, k] of inserts) {
            const spots = boundaries(text);
            const offset = spots[at % spots.length]!;
            text = `${text.slice(0, offset)}${SKIPPED[k]}\n${text.slice(offset)}`;
          }
          const a = solve(text);
          const ref = reference[which]!;
          expect(a.operatingPoint?.nodes).toEqual(ref.operatingPoint?.nodes);
          expect(a.operatingPoint?.devices).toEqual(ref.operatingPoint?.devices);
          expect(a.findings.map((f) => f.code)).toEqual(ref.findings.map((f) => f.code));
        },
      ),
      { seed: SEED, numRuns: 150 },
    );
  });
});

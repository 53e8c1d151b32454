// The false-alarm guard: healthy bias circuits of every recognised kind, and everyday circuits around them, raise no warning or error at all.

import { describe, expect, it } from 'vitest';
import type { StructureKind, Technology } from '../../../shared-analysis/src/structures/types';
import { actionable, analyseNetlist, lineOf } from './netlist-check';
import { KINDS as CATALOGUE } from '../../../shared-analysis/src/structures/catalogue';

/**
 * A healthy netlist of one structure kind in one technology, written as a designer would: NPN and
 * NMOS structures on ground with the supply on top, PNP and PMOS ones hanging from the supply,
 * a 5 V rail, a reference resistor and a 1 kΩ load on each output (invented values).
 */
function healthy(kind: StructureKind, tech: Technology): string {
  const up = tech === 'npn' || tech === 'nmos';
  const bip = tech === 'npn' || tech === 'pnp';
  const rail = up ? '0' : 'vcc';
  const feed = up ? 'vcc' : '0';
  const lines = [`Healthy ${kind} (${tech})`, 'VCC vcc 0 5', `RREF ${feed} a 4.3k`];
  const dev = (name: string, c: string, b: string, e: string) =>
    lines.push(bip ? `${name} ${c} ${b} ${e} DEV` : `M${name.slice(1)} ${c} ${b} ${e} ${rail} DEV W=10u L=1u`);
  switch (kind) {
    case 'simple-mirror':
      dev('Q1', 'a', 'a', rail);
      dev('Q2', 'out', 'a', rail);
      break;
    case 'widlar-source':
      dev('Q1', 'a', 'a', rail);
      dev('Q2', 'out', 'a', 'e2');
      lines.push(`R2 e2 ${rail} 2k`);
      break;
    case 'degenerated-mirror':
      dev('Q1', 'a', 'a', 'e1');
      lines.push(`R1 e1 ${rail} 1k`);
      dev('Q2', 'out', 'a', 'e2');
      lines.push(`R2 e2 ${rail} 1k`);
      break;
    case 'helper-mirror':
      dev('Q1', 'a', 'b', rail);
      dev('Q3', feed, 'a', 'b');
      dev('Q2', 'out', 'b', rail);
      lines.push(`RB b ${rail} 20k`);
      break;
    case 'wilson-mirror':
      dev('Q1', 'a', 'b', rail);
      dev('Q2', 'b', 'b', rail);
      dev('Q3', 'out', 'a', 'b');
      break;
    case 'improved-wilson-mirror':
      dev('Q1', 'c', 'b', rail);
      dev('Q2', 'b', 'b', rail);
      dev('Q3', 'out', 'a', 'b');
      dev('Q4', 'a', 'a', 'c');
      break;
    case 'cascode-mirror':
      dev('Q1', 'b', 'b', rail);
      dev('Q2', 'c', 'b', rail);
      dev('Q3', 'a', 'a', 'b');
      dev('Q4', 'out', 'a', 'c');
      break;
    case 'vbe-multiplier':
      // Biased by RREF; no output of its own.
      dev('Q1', 'a', 'b', rail);
      lines.push(`R1 a b ${bip ? '2.2k' : '100k'}`, `R2 b ${rail} ${bip ? '1k' : '100k'}`);
      break;
    case 'diode-referenced-source':
      // Two forward diodes from the base node to the rail, the emitter (source) resistor to the same rail.
      lines.push(up ? 'D1 a m DN' : 'D1 m a DN', up ? `D2 m ${rail} DN` : `D2 ${rail} m DN`, '.model DN d (IS=1e-14)');
      dev('Q1', 'out', 'a', 'e');
      lines.push(`RE e ${rail} ${bip ? '1.5k' : '2.2k'}`);
      break;
    case 'regulated-source':
      // RREF with R2 divides the supply to about 0.94 V for the amplifier's reference input; about 1.4 mA through RS.
      lines.push(`R2 a ${rail} 1k`, 'EAMP b 0 a s 1e5');
      dev('Q1', 'out', 'b', 's');
      lines.push(`RS s ${rail} 680`);
      break;
    default:
      return '';
  }
  if (lines.some((l) => / out /.test(l))) lines.push(`RL ${feed} out 1k`);
  lines.push(bip ? `.model DEV ${tech} (BF=150 VAF=80)` : `.model DEV ${tech} (KP=200u VTO=${up ? 0.5 : -0.5} LAMBDA=0.02)`);
  lines.push('.end', '');
  return lines.join('\n');
}

/**
 * The kinds whose healthy circuit needs more than a reference resistor and a load (self-biased loops
 * with their start-up resistor, the wide-swing cascode with its bias branch), written out in full.
 */
const WHOLE: Partial<Record<StructureKind, { tech: Technology; text: string }[]>> = {
  'ptat-cell': [
    {
      tech: 'npn',
      text: `Healthy ΔVBE cell with a start-up resistor
VCC vcc 0 5
Q1 n1 n1 0 QN
Q2 p n1 x QN 8
R x 0 1k
QP1 p p vcc QP
QP2 n1 p vcc QP
RSU vcc n1 1meg
.model QN npn (BF=100 VAF=80)
.model QP pnp (BF=50 VAF=60)
.end
`,
    },
  ],
  'bandgap-core': [
    {
      tech: 'npn',
      text: `Healthy bandgap core with a start-up resistor
VCC vcc 0 5
Q1 n1 n1 0 QN
Q2 p n1 x QN 8
R x 0 1k
QP1 p p vcc QP
QP2 n1 p vcc QP
QP3 vbg p vcc QP
R2 vbg y 10k
Q3 y y 0 QN
RSU vcc n1 1meg
.model QN npn (BF=100)
.model QP pnp (BF=50)
.end
`,
    },
  ],
  'beta-multiplier': [
    {
      tech: 'nmos',
      text: `Healthy beta-multiplier reference with a start-up resistor
VDD vdd 0 3.3
M1 n1 n1 0 0 NCH W=10u L=1u
M2 p n1 s 0 NCH W=40u L=1u
RS s 0 5k
M3 p p vdd vdd PCH W=20u L=1u
M4 n1 p vdd vdd PCH W=20u L=1u
RSU vdd n1 2meg
.model NCH nmos (KP=100u VTO=0.5)
.model PCH pmos (KP=40u VTO=-0.6)
.end
`,
    },
  ],
  'jfet-self-biased-source': (['njf', 'pjf'] as const).map((tech) => {
    // IDSS = 1m × 2² = 4 mA, ID = 1.53 mA by the self-bias quadratic; 1.53 mA × 3.3 kΩ = 5 V leaves the drain 10 V
    // from its rail, far beyond the |VP| = 2 V edge at every supply and temperature corner (invented values).
    const up = tech === 'njf';
    return {
      tech,
      text: `Healthy JFET self-biased current source (${tech})
VCC vcc 0 15
J1 d g s JX
RG g ${up ? '0' : 'vcc'} 1meg
RS s ${up ? '0' : 'vcc'} 500
RL ${up ? 'vcc d' : 'd 0'} 3.3k
.model JX ${tech} (VTO=-2 BETA=1m LAMBDA=0.01 VTOTC=-2m)
.end
`,
    };
  }),
  'wide-swing-cascode': (['nmos', 'pmos'] as const).map((tech) => {
    const up = tech === 'nmos';
    const rail = up ? '0' : 'vdd';
    const far = up ? 'vdd' : '0';
    const src = (name: string, node: string) => (up ? `${name} ${far} ${node} 50u` : `${name} ${node} ${far} 50u`);
    return {
      tech,
      text: `Healthy wide-swing cascode mirror (${tech})
VDD vdd 0 3.3
${src('IREF', 'a')}
${src('IB', 'gc')}
M1 x1 a ${rail} ${rail} DEV W=10u L=1u
M3 a gc x1 ${rail} DEV W=10u L=1u
M2 x2 a ${rail} ${rail} DEV W=10u L=1u
M4 out gc x2 ${rail} DEV W=10u L=1u
M5 gc gc ${rail} ${rail} DEV W=1.5u L=1u
RL ${far} out 20k
.model DEV ${tech} (KP=${up ? '200u' : '80u'} VTO=${up ? 0.45 : -0.5} LAMBDA=0.05 GAMMA=0.4)
.end
`,
    };
  }),
};

/** Every kind of the catalogue in each technology it exists in (the written-out ones in theirs), with its healthy netlist. */
const CASES: { kind: StructureKind; tech: Technology; text: string }[] = CATALOGUE.flatMap((k) =>
  (WHOLE[k.id] ?? k.technologies.map((tech) => ({ tech, text: healthy(k.id, tech) })).filter((c) => c.text !== '')).map((c) => ({ kind: k.id, ...c })),
);

/** The one check of this file: no warning or error, with corners on (the default), and the expected structure when one is named. */
function expectQuiet(text: string, kind?: StructureKind): void {
  const a = analyseNetlist(text, { corners: { enabled: true } });
  expect(actionable(a).map((f) => `${f.code}@${lineOf(a, f)}: ${f.message}`)).toEqual([]);
  expect(a.operatingPoint?.converged).toBe(true);
  if (kind) expect(a.structures.map((s) => s.kind)).toContain(kind);
}

describe('healthy structures of every recognised kind raise nothing', () => {
  it('covers every kind of the catalogue', () => {
    expect(CATALOGUE.filter((k) => !CASES.some((c) => c.kind === k.id)).map((k) => k.id)).toEqual([]);
  });
  for (const c of CASES) it(`${c.kind} (${c.tech})`, () => expectQuiet(c.text, c.kind));
});

describe('everyday circuits around bias networks raise nothing', () => {
  it.each([
    [
      'a zener-referenced current sink',
      `Zener-referenced NPN current sink
VCC vcc 0 12
RB vcc b 4.7k
DZ 0 b DZ56
Q1 out b e QN
RE e 0 2.2k
RL vcc out 1k
.model DZ56 d (IS=1e-14 BV=5.6 IBV=1m)
.model QN npn (IS=1e-15 BF=150 VAF=80)
.end
`,
    ],
    [
      'a reference branch with a diode in series',
      `Diode-compensated reference
VCC vcc 0 12
RREF vcc a 10k
D1 a b DN
Q1 b b 0 QN
Q2 out b 0 QN
RL vcc out 4.7k
.model DN d (IS=1e-14)
.model QN npn (BF=120 VAF=60)
.end
`,
    ],
    [
      'a saturated NPN switch and an NMOS switch, both driven from logic sources',
      `Switches driven hard on and off
VCC vcc 0 5
VIN in 0 5
VOFF off 0 0
RB in b 4.7k
Q1 lamp b 0 QN
RLAMP vcc lamp 470
M1 d in 0 0 NM W=100u L=1u
RD vcc d 1k
M2 d2 off 0 0 NM W=100u L=1u
RD2 vcc d2 1k
.model QN npn (BF=100)
.model NM nmos (KP=100u VTO=0.8)
.end
`,
    ],
    [
      'a self-biased N-channel JFET stage and a P-channel JFET current source',
      `JFET bias: source resistor self-bias and a P-channel current limiter
VDD vdd 0 15
RD vdd d 3.3k
J1 d 0 s JN
RS s 0 470
JP2 out src vdd JP
RSP vdd src 1k
RL out 0 2.2k
.model JN njf (VTO=-2 BETA=1.3m LAMBDA=0.01)
.model JP pjf (VTO=-2.5 BETA=1m LAMBDA=0.02)
.end
`,
    ],
    [
      'a divider-biased common-emitter stage and an emitter follower',
      `Divider-biased amplifier bias point
VCC vcc 0 12
R1 vcc b 47k
R2 b 0 10k
Q1 c b e QN
RC vcc c 4.7k
RE e 0 1k
Q2 vcc c f QN
RF f 0 10k
.model QN npn (BF=150 VAF=100)
.end
`,
    ],
    [
      'a PMOS bias cell used twice in a subcircuit',
      `Two PMOS bias cells
VDD vdd 0 3.3
.subckt pbias out vdd
MREF g g vdd vdd PC W=20u L=2u
MOUT out g vdd vdd PC W=40u L=2u
RSET g 0 47k
.ends pbias
X1 o1 vdd pbias
X2 o2 vdd pbias
RL1 o1 0 10k
RL2 o2 0 12k
.model PC pmos (KP=50u VTO=-0.6 LAMBDA=0.02)
.end
`,
    ],
  ])('%s', (_what, text) => expectQuiet(text));
});

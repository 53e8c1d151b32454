// The false-alarm guard: healthy bias circuits of every recognised kind, and everyday circuits around them, raise no warning or error at all.

import { describe, expect, it } from 'vitest';
import type { StructureKind, Technology } from '../../../shared-analysis/src/structures/types';
import { actionable, analyseNetlist, lineOf } from './netlist-check';

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
  }
  lines.push(`RL ${feed} out 1k`);
  lines.push(bip ? `.model DEV ${tech} (BF=150 VAF=80)` : `.model DEV ${tech} (KP=200u VTO=${up ? 0.5 : -0.5} LAMBDA=0.02)`);
  lines.push('.end', '');
  return lines.join('\n');
}

const KINDS: StructureKind[] = ['simple-mirror', 'widlar-source', 'degenerated-mirror', 'helper-mirror', 'wilson-mirror', 'improved-wilson-mirror', 'cascode-mirror'];
const TECHS: Technology[] = ['npn', 'pnp', 'nmos', 'pmos'];

/** The one check of this file: no warning or error, with corners on (the default), and the expected structure when one is named. */
function expectQuiet(text: string, kind?: StructureKind): void {
  const a = analyseNetlist(text, { corners: { enabled: true } });
  expect(actionable(a).map((f) => `${f.code}@${lineOf(a, f)}: ${f.message}`)).toEqual([]);
  expect(a.operatingPoint?.converged).toBe(true);
  if (kind) expect(a.structures.map((s) => s.kind)).toContain(kind);
}

describe('healthy structures of every recognised kind raise nothing', () => {
  for (const kind of KINDS) {
    for (const tech of TECHS) {
      it(`${kind} (${tech})`, () => expectQuiet(healthy(kind, tech), kind));
    }
  }
});

describe('everyday circuits around bias networks raise nothing', () => {
  it.each([
    [
      // A zener reference joins this list once the solver models reverse breakdown.
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

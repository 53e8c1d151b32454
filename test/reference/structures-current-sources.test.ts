// Current sources against their published formulas worked out independently in the test, and against the solver: the diode-referenced source, I = (VREF − VBE)/RE, and the op-amp-regulated source, I = VREF/RSENSE.

import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../shared-analysis/src/analysis';
import { analyseStructures } from '../../shared-analysis/src/checks/structures';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import { recogniseStructures } from '../../shared-analysis/src/structures/recognise';
import { CircuitBuilder } from '../unit/structures/build';
import { analyseNetlist, applyAndRecheck } from '../unit/checks/netlist-check';

/** k·T/q at 27 °C (SI 2019 exact constants). */
const VT = (1.380649e-23 * 300.15) / 1.602176634e-19;

/** Root of a rising function on [lo, hi] by bisection, written here independently of the engine. */
function bisect(f: (x: number) => number, lo: number, hi: number): number {
  for (let n = 0; n < 200; n++) {
    const mid = 0.5 * (lo + hi);
    if (f(mid) > 0) hi = mid;
    else lo = mid;
  }
  return 0.5 * (lo + hi);
}

function check(got: number, want: number, tol: number): void {
  expect(Number.isFinite(got)).toBe(true);
  expect(Math.abs(got - want)).toBeLessThanOrEqual(tol * Math.abs(want));
}

describe('zener-referenced NPN current sink', () => {
  // 12 V through RB = 4.7 kΩ into a 5.6 V zener (IBV = 1 mA at BV) on the base; RE = 2.2 kΩ; IS = 1e-15 A, β = 150 (invented values).
  const BV = 5.6;
  const IBV = 1e-3;
  const IS = 1e-15;
  const BETA = 150;
  const RB = 4.7e3;
  const RE = 2.2e3;
  const circuit = () =>
    new CircuitBuilder()
      .v('VCC', 'vcc', '0', 12)
      .model('dz', 'd', { IS: 1e-14, BV, IBV })
      .model('qn', 'npn', { IS, BF: BETA })
      .r('RB', 'vcc', 'b', RB)
      .d('DZ', '0', 'b', 'dz')
      .q('Q1', 'out', 'b', 'e', 'qn')
      .r('RE', 'e', '0', RE)
      .r('RL', 'vcc', 'out', 1e3)
      .build();

  /**
   * The node equations written out here: IC solves VB = VT·ln(IC/IS + 1) + IC·(1 + 1/β)·RE (Horowitz and
   * Hill, 3rd ed., ch. 2, the zener-biased current source, from memory: I = (VZ − VBE)/RE), and VB
   * balances the feed (12 − VB)/RB = IZ + IC/β with the breakdown law IZ = IBV·exp((VB − BV)/VT)
   * (docs/DEVICE-MODELS.md; the zener's forward term is negligible in reverse).
   */
  function independent(): { vb: number; ic: number; iz: number } {
    const icAt = (vb: number) => bisect((ic) => VT * Math.log(ic / IS + 1) + ic * (1 + 1 / BETA) * RE - vb, 0, 1);
    const vb = bisect((v) => IBV * Math.exp((v - BV) / VT) + icAt(v) / BETA - (12 - v) / RB, 0, 12);
    return { vb, ic: icAt(vb), iz: IBV * Math.exp((vb - BV) / VT) };
  }

  it('the hand estimate follows I = (VREF − VBE)/RE·β/(β + 1) with the zener at its own current', () => {
    const c = circuit();
    const s = recogniseStructures(c).find((x) => x.kind === 'diode-referenced-source')!;
    expect(s).toBeDefined();
    const op = new DcSolver(c).solve().op;
    analyseStructures({ circuit: c, op, structures: [s], options: resolveOptions() });
    const want = independent();
    check(s.estimate!.iout.Q1, want.ic, 2e-3);
    check(s.estimate!.voltages!.VREF, want.vb, 1e-3);
    // The designer's first cut, (VZ − 0.7 V)/RE (common practice), is within a few percent.
    check(s.estimate!.iout.Q1, (BV - 0.7) / RE, 0.05);
    // The solver agrees: the source's current and the base voltage.
    check(s.solved!.iout.Q1, want.ic, 0.01);
    check(s.voltages![0].solved!, want.vb, 1e-3);
    expect(s.outputs[0].degeneration?.resistor).toBe('RE');
  });

  it('a missed target on the output sizes RE, the resistor that sets the current, and the applied fix meets it', () => {
    const text = `Zener sink with a target
VCC vcc 0 12
RB vcc b 4.7k
DZ 0 b DZ56
Q1 out b e QN ; expect 3mA
RE e 0 2.2k
RL vcc out 1k
.model DZ56 d (IS=1e-14 BV=5.6 IBV=1m)
.model QN npn (IS=1e-15 BF=150)
.end
`;
    const a = analyseNetlist(text);
    const f = a.findings.find((x) => x.code === 'target-missed')!;
    expect(f.message).toMatch(/RE sets it/);
    // Ohm's law on RE (common practice): 3 mA needs about (5.6 − 0.7)/3 mA ≈ 1.6 kΩ; the fix is re-solved and applied.
    const { fix } = applyAndRecheck(text, 'target-missed');
    expect(fix.title).toMatch(/^Set RE to 1\.[5-7]k/);
  });
});

describe('op-amp-regulated NPN current sink', () => {
  // A 10 k/1 k divider from 12 V on the non-inverting input, gain 1e5, a 100 Ω sense resistor (invented values).
  const text = (target = '') => `Op-amp regulated NPN current sink
VCC vcc 0 12
R1 vcc ref 10k
R2 ref 0 1k
EAMP b 0 ref s 1e5
Q1 out b s QN${target}
RS s 0 100
RL vcc out 470
.model QN npn (IS=1e-15 BF=150 VAF=80)
.end
`;

  it('IE = VREF/RSENSE·A/(1 + A), IC = IE·β/(β + 1), against the divider worked out here and the solve', () => {
    // Source: Horowitz and Hill, 3rd ed., ch. 4 — the loop holds the sense node at VREF, so I = VREF/RSENSE (from memory).
    const a = analyseNetlist(text());
    const s = a.structures.find((x) => x.kind === 'regulated-source')!;
    expect(s).toBeDefined();
    const vref = (12 * 1e3) / (10e3 + 1e3); // the divider, Ohm's law
    const ie = (vref / 100) * (1e5 / (1 + 1e5));
    check(s.estimate!.iref, ie, 1e-9);
    check(s.estimate!.iout.Q1, (ie * 150) / 151, 1e-9);
    check(s.estimate!.voltages!.VREF, vref, 1e-12);
    // The solver's collector current differs by the Early effect on β (VAF = 80 V) only.
    check(s.solved!.iout.Q1, (ie * 150) / 151, 0.01);
  });

  it('with the amplifier written as a subcircuit (an E source behind 100 Ω), the same current', () => {
    const a = analyseNetlist(`Regulated sink with a subcircuit amplifier
VCC vcc 0 12
R1 vcc ref 10k
R2 ref 0 1k
.subckt amp inp inn out
E1 int 0 inp inn 1e5
RO int out 100
.ends amp
XA ref s b amp
Q1 out b s QN
RS s 0 100
RL vcc out 470
.model QN npn (IS=1e-15 BF=150 VAF=80)
.end
`);
    const s = a.structures.find((x) => x.kind === 'regulated-source')!;
    expect(s).toBeDefined();
    expect(Object.keys(s.parts ?? {}).sort()).toEqual(['XA.E1', 'XA.RO']);
    const ie = ((12 * 1e3) / 11e3 / 100) * (1e5 / (1 + 1e5));
    check(s.estimate!.iref, ie, 1e-9);
    check(s.solved!.iout.Q1, (ie * 150) / 151, 0.01);
  });

  it('a missed target sizes the sense resistor, and the applied fix meets it', () => {
    const { fix } = applyAndRecheck(text(' ; expect 5mA'), 'target-missed');
    // Ohm's law: 1.09 V/5 mA ≈ 218 Ω.
    expect(fix.title).toMatch(/^Set RS to 2[12]\d /);
  });
});

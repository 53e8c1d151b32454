// Elaboration and whole-analysis tests of the dialect as people keep it: what is read, what is
// skipped silently and what is reported as left out, each on an inline netlist.
//
// Readings follow the family's conventions as the README's dialect section writes them down ("The netlist dialect";
// common practice, from memory). Expected voltages are computed in the test from Ohm's law and the
// voltage-divider rule.

import { describe, expect, it } from 'vitest';
import { analyse } from '../../../shared-analysis/src/service';
import type { Analysis } from '../../../shared-analysis/src/analysis';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { documentSymbols } from '../../../shared-analysis/src/features/symbols';

const ROOT = '/w/top.cir';

function run(text: string, files: Record<string, string> = {}): Analysis {
  return analyse({ uri: ROOT, text }, new MemoryWorkspace({ ...files, [ROOT]: text }), { corners: { enabled: false } });
}

const codes = (a: Analysis): string[] => a.findings.map((f) => f.code);
const errors = (a: Analysis): string[] => a.findings.filter((f) => f.severity === 'error').map((f) => `${f.code}: ${f.message}`);

/** Node voltage of a solved analysis. */
function v(a: Analysis, node: string): number {
  const x = a.operatingPoint?.nodes[node];
  if (x === undefined) throw new Error(`no node ${node}: ${JSON.stringify(a.operatingPoint?.nodes)}; ${codes(a).join(', ')}`);
  return x;
}

describe('script blocks never reach the circuit', () => {
  // Source: voltage divider, V(out) = 5 V · 10k / (10k + 10k) = 2.5 V.
  const plain = 'divider\nV1 in 0 5\nR1 in out 10k\nR2 out 0 10k\n.op\n.end\n';
  const scripted = 'divider\nV1 in 0 5\nR1 in out 10k\nR2 out 0 10k\n.control\nop\nif out > 0.5\n  let gain = 2\n  echo high\nend\nprint v(out)\n.endc\n.op\n.end\n';

  it('gives the same bias point with and without the block, and no finding from inside it', () => {
    const a = run(plain);
    const b = run(scripted);
    expect(v(a, 'out')).toBeCloseTo(2.5, 9);
    expect(v(b, 'out')).toBe(v(a, 'out'));
    expect(Object.keys(b.operatingPoint!.devices).sort()).toEqual(Object.keys(a.operatingPoint!.devices).sort());
    expect(codes(b)).toEqual(codes(a));
  });
});

describe('analysis cards', () => {
  it('raises nothing for analysis, output and initial-condition cards', () => {
    const a = run('bench\nV1 in 0 AC 1 DC 5\nR1 in out 1k\nR2 out 0 1k\n.tran 1u 1m\n.ac dec 10 1 1meg\n.meas tran t1 when v(out)=2\n.ic v(out)=1\n.nodeset v(out)=2.5\n.print tran v(out)\n.probe\n.four 1k v(out)\n.end\n');
    expect(codes(a)).toEqual([]);
    expect(v(a, 'out')).toBeCloseTo(2.5, 9);
  });

  it('notes .alter once and analyses the netlist before it', () => {
    const a = run('alt\nV1 in 0 5\nR1 in out 1k\nR2 out 0 1k\n.alter\nR2 out 0 4k\n.alter\nR2 out 0 9k\n');
    expect(codes(a)).toEqual(['alternatives-not-analysed']);
    expect(v(a, 'out')).toBeCloseTo(2.5, 9);
  });

  it('takes the title from .title', () => {
    expect(run('first line\n.title Reference branch check\nR1 a 0 1k\nV1 a 0 1\n').circuit!.title).toBe('Reference branch check');
  });
});

describe('sources', () => {
  it('gives a source with only an AC or transient-noise specification a DC value of 0, with no finding', () => {
    // Source: with V2 = 0 V the divider node sits at 5 V · 1k / 2k = 2.5 V.
    const a = run('ac only\nV1 in 0 5\nV2 mid 0 AC 1\nR1 in out 1k\nR2 out mid 1k\nV3 n 0 TRNOISE(1n 1p 0 0)\nR3 n 0 1k\n');
    expect(errors(a)).toEqual([]);
    expect(codes(a)).toEqual([]);
    expect(v(a, 'out')).toBeCloseTo(2.5, 9);
  });

  it('reads a 0 V source between two names of ground as a consistent short', () => {
    const a = run('grounds\nVgnd gnd 0 0\nV1 in gnd 5\nR1 in 0 1k\n');
    expect(errors(a)).toEqual([]);
    expect(v(a, 'in')).toBeCloseTo(5, 9);
  });
});

describe('.global, .if and instance overrides', () => {
  it('connects a .global node inside a subcircuit to the top-level node of that name', () => {
    // Source: the cell's resistor hangs from the global vdd, so the divider is 6 V · 2k / (1k + 2k) = 4 V.
    const a = run('globals\n.global vdd\n.subckt cell out\nR1 vdd out 1k\n.ends\nVDD vdd 0 6\nX1 o cell\nR2 o 0 2k\n');
    expect(errors(a)).toEqual([]);
    expect(v(a, 'o')).toBeCloseTo(4, 9);
  });

  it('keeps only the branch of .if/.elseif/.else its condition takes', () => {
    const bench = (corner: number) =>
      `corners\n.param corner=${corner}\n.if (corner == 1)\n.param rb=1k\n.elseif (corner == 2)\n.param rb=3k\n.else\n.param rb=9k\n.endif\nV1 in 0 4\nR1 in out 1k\nR2 out 0 {rb}\n`;
    // Source: divider, V(out) = 4 V · rb / (1k + rb).
    for (const [corner, rb] of [[1, 1e3], [2, 3e3], [7, 9e3]] as const) {
      const a = run(bench(corner));
      expect(errors(a), `corner ${corner}`).toEqual([]);
      expect(v(a, 'out')).toBeCloseTo((4 * rb) / (1e3 + rb), 9);
    }
  });

  it('evaluates a condition inside a subcircuit with each instance`s parameters', () => {
    const a = run('per instance\n.subckt leg top n=1\n.if (n > 1)\nR1 top 0 1k\n.else\nR1 top 0 2k\n.endif\n.ends\nV1 a 0 2\nX1 a leg n=2\nV2 b 0 2\nX2 b leg\n');
    expect(errors(a)).toEqual([]);
    // Source: Ohm's law, 2 V across 1k is 2 mA and across 2k is 1 mA.
    const dev = a.operatingPoint!.devices;
    expect(dev['X1.R1']).toMatchObject({ type: 'resistor' });
    expect((dev['X1.R1'] as { current: number }).current).toBeCloseTo(2e-3, 12);
    expect((dev['X2.R1'] as { current: number }).current).toBeCloseTo(1e-3, 12);
  });
});

describe('elements the solver does not read yet', () => {
  it('leaves them out with one finding per kind and no error cascade', () => {
    const a = run(
      'mixed\nV1 in 0 5\nR1 in out 1k\nR2 out 0 1k\nZ1 out g 0 ZN\nZ2 out g 0 ZN\nZ3 out g 0 ZN\nU1 in out DGATE\nU2 in out DGATE\nE1 x 0 LAPLACE {V(in)} {1/(1+s)}\nRX x 0 1k\nK1 L1 L2 0.9\nL1 in a 1m\nR3 a 0 1k\nL2 b 0 1m\nR4 in b 1k\n',
    );
    expect(errors(a)).toEqual([]);
    const leftOut = a.findings.filter((f) => f.code.startsWith('element-not-analysed'));
    expect(leftOut.map((f) => [f.code, f.data?.['kind'], f.data?.['count']])).toEqual([
      ['element-not-analysed', 'Z', 3],
      ['element-not-analysed', 'U', 2],
      ['element-not-analysed', 'behaviour', 1],
      ['element-not-analysed-no-dc-effect', 'K', 1],
    ]);
    expect(leftOut[0]!.message).toMatch(/^3 MESFETs \(`Z1`, `Z2`, `Z3`\) are not analysed yet and are left out/);
  });
});

describe('model and library files opened on their own', () => {
  it('raises no error for a model file that only a test bench would use', () => {
    const a = run('.model QN NPN (IS=1e-15 BF=150 VAF=80)\n.model QP PNP (IS=2e-15 BF=80)\n.subckt mirror in out vee\nQ1 in in vee QN\nQ2 out in vee QN\n.ends\n');
    expect(errors(a)).toEqual([]);
    expect(a.symbols.models.map((m) => m.name)).toEqual(['QN', 'QP']);
    expect(a.documents[ROOT]!.cards[0]!.kind).toBe('model');
  });
});

describe('names that start with a digit', () => {
  it('finds models named like part numbers', () => {
    // Source: the diode's forward drop is near 0.6–0.7 V at 1 mA for IS = 2.5 nA (common practice, from memory),
    // here only checked to lie between 0.3 V and 0.9 V, i.e. the model was found and the diode conducts.
    const a = run('parts\nV1 in 0 5\nR1 in a 4.3k\nD1 a 0 1N4148\n.model 1N4148 D (IS=2.5n N=1.75)\n');
    expect(errors(a)).toEqual([]);
    expect(v(a, 'a')).toBeGreaterThan(0.3);
    expect(v(a, 'a')).toBeLessThan(0.9);
  });
});

describe('outline', () => {
  it('shows a skipped block as one entry and a section library opened alone as its sections', () => {
    const bench = run('bench\nV1 a 0 1\nR1 a 0 1k\n.control\nop\nprint v(a)\n.endc\n');
    const blocks = documentSymbols(bench, ROOT).filter((s) => s.kind === 'skipped-block');
    expect(blocks.map((b) => [b.name, b.children.length])).toEqual([['.control', 0]]);

    const lib = run('.lib typical\n.model QN NPN (BF=150)\n.endl typical\n.lib slow\n.model QN NPN (BF=90)\n.subckt pair a b\nR1 a b 1k\n.ends\n.endl slow\n');
    expect(errors(lib)).toEqual([]);
    const sections = documentSymbols(lib, ROOT).filter((s) => s.kind === 'section');
    expect(sections.map((s) => [s.name, s.children.map((c) => `${c.kind} ${c.name}`)])).toEqual([
      ['typical', ['model QN']],
      ['slow', ['model QN', 'subcircuit pair']],
    ]);
  });
});

describe('user functions, continued expressions and size scale', () => {
  it('evaluates .func functions in expressions, through parameters and other functions', () => {
    // Source: divider, V(out) = 6 V · R2 / (R1 + R2) with R1 = R2 = half(4k) = 2k, so 3 V.
    const a = run('funcs\n.func half(x) = {x/2}\n.func twice(y) {2*y}\n.param r={half(twice(2k))}\nV1 in 0 6\nR1 in out {r}\nR2 out 0 {half(4k)}\n');
    expect(errors(a)).toEqual([]);
    expect(v(a, 'out')).toBeCloseTo(3, 9);
  });

  it('refuses a recursive function with a located error', () => {
    const a = run('recursive\n.func f(x) = {x > 1 ? f(x-1) : 1}\nV1 in 0 1\nR1 in 0 {f(3)}\n');
    const e = a.findings.find((f) => f.code === 'element-value-invalid')!;
    expect(e.message).toMatch(/calls itself \(f → f\); a \.func function cannot be recursive/);
    expect(a.documents[ROOT]!.text.slice(e.span.start, e.span.end)).toBe('f(3)');
  });

  it('still names an unknown function', () => {
    const a = run('unknown\nV1 in 0 1\nR1 in 0 {nosuch(3)}\n');
    expect(a.findings.find((f) => f.code === 'element-value-invalid')!.message).toMatch(/`nosuch` is not a known function/);
  });

  it('reads a {…} expression that continues over + lines', () => {
    // Source: 2k + 3k = 5k, so 5 V across it is 1 mA.
    const a = run('continued\n.param r = {2k +\n+ 3k}\nV1 in 0 5\nR1 in 0 {r\n+ * 1}\n');
    expect(errors(a)).toEqual([]);
    expect((a.operatingPoint!.devices['R1'] as { current: number }).current).toBeCloseTo(1e-3, 12);
  });

  it('multiplies element sizes by .option scale', () => {
    const a = run('scaled\n.option scale=1e-6\nV1 d 0 5\nM1 d d 0 0 NM W=20 L=2\n.model NM NMOS (VTO=1 KP=100u)\n');
    expect(errors(a)).toEqual([]);
    const m = a.circuit!.elements.find((e) => e.name === 'M1') as { w: number; l: number };
    expect(m.w).toBeCloseTo(20e-6, 18);
    expect(m.l).toBeCloseTo(2e-6, 18);
  });
});

describe('branches no instance takes', () => {
  it('are listed as inactive text, and syntax problems inside them are not reported', () => {
    const text = 'inactive\n.param mode=1\n.if (mode == 2)\nQ1 c b\n.model broken\n.else\nR1 a 0 1k\n.endif\nV1 a 0 1\n';
    const a = run(text);
    expect(codes(a)).toEqual([]);
    expect(a.inactive!.map((r) => text.slice(r.span.start, r.span.end))).toEqual(['\nQ1 c b\n.model broken\n']);
  });

  it('keeps a branch some instance takes active', () => {
    const text = 'per instance\n.subckt leg top n=1\n.if (n > 1)\nR1 top 0 1k\n.else\nR1 top 0 2k\n.endif\n.ends\nV1 a 0 2\nX1 a leg n=2\nX2 a leg\n';
    expect(run(text).inactive).toEqual([]);
    const one = 'one instance\n.subckt leg top n=1\n.if (n > 1)\nR1 top 0 1k\n.else\nR1 top 0 2k\n.endif\n.ends\nV1 a 0 2\nX2 a leg\n';
    const a = run(one);
    expect(a.inactive!.map((r) => one.slice(r.span.start, r.span.end))).toEqual(['\nR1 top 0 1k\n']);
  });
});

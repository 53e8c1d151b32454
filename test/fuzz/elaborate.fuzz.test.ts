// Property tests: mutated netlists never make parse + elaborate + topology checks throw, hang or point outside a document.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { elaborate } from '../../shared-analysis/src/elaborate/index';
import { checkConnectivity } from '../../shared-analysis/src/checks/connectivity';
import { NETLIST_CODES } from '../../shared-analysis/src/checks/netlist';
import { parse } from '../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace, type Finding } from '../../shared-analysis/src/types';

const SEED = 20260601;

/** Invented demo netlists covering every card kind the elaborator reads. */
const CORPUS = [
  `bias cell for a sensor front end
.include "lib/parts.inc"
.lib "lib/corners.lib" typical
.param vsup=5 iref=100u rref={(vsup-0.65)/iref}
.temp 40
.option tnom=25
Vsup vdd 0 DC {vsup}
Rref vdd ref {rref}
Q1 ref ref 0 qsense
Q2 out ref 0 qsense 2
Rload vdd out 22k
X1 vdd out2 gainstage g=3
.subckt gainstage a b g=1 PARAMS: r0=1k
.param rr={g*r0}
.model qloc pnp (bf=80 vaf=40)
R1 a b {rr}
Q1 b b a qloc
.ends gainstage
.end
`,
  `nmos mirror demo
.model mn nmos (kp=120u vto=0.45 lambda=0.05 level=1)
.param wl=4
Vdd vdd 0 3.3
Iref vdd g 50u
M1 g g 0 0 mn W={wl*1u} L=1u
M2 d g 0 0 mn W={2*wl*1u} L=1u M=2
Rd vdd d 10k
C1 g 0 1p
E1 e 0 d 0 2
Re e 0 1k
Vs d s 0
F1 0 f Vs 1.5
Rf f 0 1k
H1 h 0 Vs 100
Rh h 0 1k
G1 0 k d 0 1m
Rk k 0 1k
L1 vdd l 1u
Rl l 0 1meg
D1 l 0 dx 2
.model dx d (is=1e-14 n=1.05 rs=10)
`,
];

/** Library files the corpus includes, so includes resolve and are fuzzed too. */
const LIBRARY: Record<string, string> = {
  '/w/lib/parts.inc': `.model qsense npn (is=2e-16 bf=180 vaf=75)\n.include common.inc\n`,
  '/w/lib/common.inc': `.param rbase=4.7k\n`,
  '/w/lib/corners.lib': `.lib typical\n.param beta_scale=1\n.endl typical\n.lib fast\n.param beta_scale=1.5\n.endl fast\n`,
};

/** Pieces a mutation may insert: netlist syntax that stresses every path of the elaborator. */
const FRAGMENTS = [
  ' ', '\n', '\r\n', '+', '*', ';', '$ ', '=', '(', ')', '{', '}', "'", '"', ',', '.', '0', 'gnd', '1k', '4k7', '1e400', '-1',
  '{1/0}', '{a}', '{sqrt(-1)}', '{import(x)}', '{a.b}', '{[1,2]}', '{1:3}', '{x=1}', '{((((((((((1))))))))))}',
  '.param a={b} b={a}', '.include "lib/parts.inc"', '.include missing.inc', '.include "../w/top.cir"', '.lib "lib/corners.lib" nosuch',
  '.subckt', '.ends', '.subckt loop p\nX1 p loop\n.ends', 'X9 a b', 'X8 a gainstage', '.model', '.model qz npx', '.model q2 npn (is=0 bf=-1 vaf=-3 zz=1)',
  'Q9 a b c', 'M9 a b c d', 'M9 a b c d mn W=0 L=1e3', 'F9 a b Vnope 1', 'R9 a a 0', 'V9 a a 1', 'I9 a b', '.temp -400', '.option tnom={1/0}',
  'µ', '\u00a0', '\ud83d\ude00', '\u0000',
];

type Mutation = { kind: 'insert'; at: number; text: string } | { kind: 'delete'; at: number; length: number } | { kind: 'duplicate-line'; at: number };

const mutation: fc.Arbitrary<Mutation> = fc.oneof(
  fc.record({ kind: fc.constant('insert' as const), at: fc.nat(), text: fc.oneof(fc.constantFrom(...FRAGMENTS), fc.string({ maxLength: 6 })) }),
  fc.record({ kind: fc.constant('delete' as const), at: fc.nat(), length: fc.integer({ min: 1, max: 12 }) }),
  fc.record({ kind: fc.constant('duplicate-line' as const), at: fc.nat() }),
);

function apply(text: string, muts: Mutation[]): string {
  let t = text;
  for (const m of muts) {
    const at = t.length === 0 ? 0 : m.at % (t.length + 1);
    if (m.kind === 'insert') t = t.slice(0, at) + m.text + t.slice(at);
    else if (m.kind === 'delete') t = t.slice(0, at) + t.slice(at + m.length);
    else {
      const start = t.lastIndexOf('\n', at - 1) + 1;
      const endNl = t.indexOf('\n', at);
      const end = endNl < 0 ? t.length : endNl + 1;
      t = t.slice(0, end) + t.slice(start, end) + t.slice(end);
    }
  }
  return t;
}

/** Runs the whole front half of the pipeline and checks the invariants every finding must keep. */
function runAndCheck(files: Record<string, string>): void {
  const ws = new MemoryWorkspace(files);
  const root = parse('/w/top.cir', files['/w/top.cir']!, { hasTitle: true });
  const r = elaborate(root, ws);
  const findings: Finding[] = [...r.findings, ...checkConnectivity(r.circuit)];
  for (const f of findings) {
    const doc = r.documents[f.uri];
    expect(doc, `${f.code} in unknown document ${f.uri}`).toBeDefined();
    expect(f.span.start, f.code).toBeGreaterThanOrEqual(0);
    expect(f.span.end, f.code).toBeGreaterThanOrEqual(f.span.start);
    expect(f.span.end, f.code).toBeLessThanOrEqual(doc!.text.length);
    for (const rel of f.related ?? []) {
      const rd = r.documents[rel.uri];
      expect(rd, `${f.code} related in unknown document`).toBeDefined();
      expect(rel.span.end).toBeLessThanOrEqual(rd!.text.length);
    }
    expect(NETLIST_CODES[f.code], `unlisted code ${f.code}`).toBeDefined();
    expect(f.code).not.toBe('elaboration-internal-error');
    expect(f.message).not.toMatch(/NaN|undefined|Infinity/);
    // Finding data must survive JSON unchanged (no NaN, no Infinity).
    if (f.data) expect(JSON.parse(JSON.stringify(f.data))).toEqual(f.data);
  }
  for (const e of r.circuit.elements) {
    for (const v of Object.values(e)) if (typeof v === 'number') expect(Number.isNaN(v), e.name).toBe(false);
    for (const k of e.nodes) expect(k >= 0 && k < r.circuit.nodes.length).toBe(true);
  }
  expect(Number.isFinite(r.circuit.temperatureC)).toBe(true);
}

describe('elaboration under mutation', () => {
  it('never throws, and every finding lies inside its document', () => {
    fc.assert(
      fc.property(fc.constantFrom(...CORPUS), fc.array(mutation, { minLength: 1, maxLength: 8 }), (base, muts) => {
        runAndCheck({ ...LIBRARY, '/w/top.cir': apply(base, muts) });
      }),
      { seed: SEED, numRuns: 300 },
    );
  });

  it('survives mutated library files too', () => {
    fc.assert(
      fc.property(fc.constantFrom(...Object.keys(LIBRARY)), fc.array(mutation, { minLength: 1, maxLength: 6 }), (file, muts) => {
        runAndCheck({ ...LIBRARY, [file]: apply(LIBRARY[file]!, muts), '/w/top.cir': CORPUS[0]! });
      }),
      { seed: SEED + 1, numRuns: 150 },
    );
  });

  it('handles random include graphs, cycles included, without looping', () => {
    fc.assert(
      fc.property(fc.array(fc.array(fc.integer({ min: 0, max: 5 }), { maxLength: 4 }), { minLength: 6, maxLength: 6 }), (edges) => {
        const files: Record<string, string> = {};
        edges.forEach((targets, i) => {
          const name = i === 0 ? '/w/top.cir' : `/w/f${i}.inc`;
          const lines = targets.map((t) => `.include ${t === 0 ? 'top.cir' : `f${t}.inc`}`);
          files[name] = (i === 0 ? 'graph\n' : '') + lines.join('\n') + `\nR${i} n${i} 0 1k\n`;
        });
        runAndCheck(files);
      }),
      { seed: SEED + 2, numRuns: 100 },
    );
  });

  it('survives a chain of 5000 nested subcircuit definitions without overflowing the stack', () => {
    let text = 'long chain\nV1 n 0 1\n';
    for (let k = 0; k < 5000; k++) text += `.subckt s${k} a\nX1 a s${k + 1}\nR1 a 0 1k\n.ends\n`;
    text += 'Xtop n s0\n';
    const r = elaborate(parse('/w/top.cir', text, { hasTitle: true }), new MemoryWorkspace());
    expect(r.findings.map((f) => f.code)).toEqual(['subckt-nesting-too-deep']);
  });

  it('stops a subcircuit explosion at the element limit quickly', () => {
    // Ten levels of ten instances each would be 10^10 resistors.
    let text = 'explosion\nV1 n 0 1\n';
    for (let level = 0; level < 10; level++) {
      text += `.subckt s${level} a\n`;
      for (let k = 0; k < 10; k++) text += level === 0 ? `R${k} a 0 1k\n` : `X${k} a s${level - 1}\n`;
      text += '.ends\n';
    }
    text += 'Xtop n s9\n';
    const r = elaborate(parse('/w/top.cir', text, { hasTitle: true }), new MemoryWorkspace(), { maxElements: 20000 });
    expect(r.findings.map((f) => f.code)).toContain('circuit-too-large');
    expect(r.circuit.elements.length).toBeLessThanOrEqual(20000);
  });
});

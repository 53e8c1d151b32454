// Resistor temperature coefficients and sheet-resistance models, switches and behavioural sources at DC, each against a closed form or an independent computation written in the test (docs/DEVICE-MODELS.md).

import { describe, expect, it } from 'vitest';
import { analyseNetlist } from '../unit/checks/netlist-check';
import type { Analysis } from '../../shared-analysis/src/analysis';
import type { TwoTerminalRecord } from '../../shared-analysis/src/solve/types';

function solved(text: string, temperatureC?: number): Analysis {
  const a = analyseNetlist(text, temperatureC === undefined ? {} : { temperatureC });
  expect(a.operatingPoint?.converged, a.findings.map((f) => `${f.code}: ${f.message}`).join('\n')).toBe(true);
  return a;
}

const current = (a: Analysis, name: string): number => (a.operatingPoint!.devices[name] as TwoTerminalRecord).current;

describe('resistor temperature coefficients', () => {
  it('scales R by 1 + TC1·ΔT + TC2·ΔT² from the instance card', () => {
    // Source: the quadratic temperature law of a resistor, R(T) = R0·(1 + α·ΔT + β·ΔT²) (common practice, from memory; the
    // TC1/TC2 names are the shared model-parameter names). 10 V across 1 kΩ with TC1 = 1e-3/K, TC2 = 1e-5/K² at ΔT = 100 K:
    // R = 1 kΩ·(1 + 0.1 + 0.1) = 1.2 kΩ, I = 8.333… mA.
    const text = 'tc\nV1 a 0 10\nR1 a 0 1k TC1=1e-3 TC2=1e-5\n.end\n';
    expect(current(solved(text, 127), 'R1')).toBeCloseTo(10 / 1200, 15);
    expect(current(solved(text, 27), 'R1')).toBeCloseTo(10 / 1000, 15);
    expect(current(solved(text, -73), 'R1')).toBeCloseTo(10 / (1000 * (1 - 0.1 + 0.1)), 15);
  });

  it('reads TC=a,b as TC1 and TC2, and takes the model’s coefficients when the card gives none', () => {
    const a = solved('tc pair\nV1 a 0 10\nR1 a 0 2k TC=2e-3,1e-6\nR2 a 0 2k RTC\nR3 a 0 2k RTC TC1=0\n.model RTC R (TC1=3e-3)\n.end\n', 77);
    // ΔT = 50 K: R1 = 2k·(1 + 0.1 + 0.0025), R2 = 2k·(1 + 0.15), R3 has its own TC1 = 0.
    expect(current(a, 'R1')).toBeCloseTo(10 / (2000 * 1.1025), 15);
    expect(current(a, 'R2')).toBeCloseTo(10 / (2000 * 1.15), 15);
    expect(current(a, 'R3')).toBeCloseTo(10 / 2000, 15);
    expect(a.findings.filter((f) => f.code === 'unexpected-field')).toEqual([]);
  });

  it('moves a divider’s output with the two resistors’ different coefficients', () => {
    // Independent computation: V(out) = V·R2(T)/(R1(T) + R2(T)).
    const text = 'drift\nV1 a 0 5\nR1 a out 10k TC1=-500e-6\nR2 out 0 10k TC1=2000e-6\n.end\n';
    for (const t of [-40, 27, 125]) {
      const dt = t - 27;
      const r1 = 10e3 * (1 - 500e-6 * dt);
      const r2 = 10e3 * (1 + 2000e-6 * dt);
      expect(solved(text, t).operatingPoint!.nodes.out).toBeCloseTo((5 * r2) / (r1 + r2), 12);
    }
  });
});

describe('resistor models with a sheet resistance', () => {
  it('takes R = RSH·L/W when the card gives no value', () => {
    // Source: sheet resistance of a rectangular film, R = Rs·L/W (common practice). 200 Ω/□, L = 50 µm, W = 2 µm: 5 kΩ.
    const a = solved('poly\nV1 a 0 5\nR1 a 0 RPOLY L=50u W=2u\n.model RPOLY R (RSH=200)\n.end\n');
    expect(current(a, 'R1')).toBeCloseTo(5 / 5000, 15);
  });

  it('reports a model resistor without W and leaves it out', () => {
    const a = analyseNetlist('poly\nV1 a 0 5\nR1 a b RPOLY L=50u\nR2 b 0 1k\n.model RPOLY R (RSH=200)\n.end\n');
    const f = a.findings.find((x) => x.code === 'element-value-missing');
    expect(f?.message).toMatch(/RSH·L\/W.*no usable W/);
  });
});

describe('switches', () => {
  const sw = (text: string, t?: number) => solved(text, t).operatingPoint!.devices;

  it('is RON above VT + VH and ROFF below VT − VH (voltage-controlled)', () => {
    // Independent computation: a 5 V source, a 1 kΩ load and the switch in series: I = 5/(1k + R).
    const on = sw('s on\nV1 a 0 5\nRL a b 1k\nS1 b 0 c 0 SMOD\nVC c 0 2\n.model SMOD SW (RON=10 ROFF=1meg VT=1 VH=0.2)\n.end\n');
    expect((on.S1 as { current: number }).current).toBeCloseTo(5 / 1010, 15);
    expect(on.S1).toMatchObject({ type: 'switch', region: 'on', resistance: 10 });
    const off = sw('s off\nV1 a 0 5\nRL a b 1k\nS1 b 0 c 0 SMOD\nVC c 0 0.5\n.model SMOD SW (RON=10 ROFF=1meg VT=1 VH=0.2)\n.end\n');
    expect((off.S1 as { current: number }).current).toBeCloseTo(5 / 1.001e6, 15);
    expect(off.S1).toMatchObject({ region: 'off' });
  });

  it('interpolates ln R smoothly inside the hysteresis band', () => {
    // docs/DEVICE-MODELS.md: u = (c − VT + h)/(2h), s = 3u² − 2u³, ln R = ln ROFF + (ln RON − ln ROFF)·s, written out here.
    const c = 1.05;
    const u = (c - 1 + 0.2) / 0.4;
    const s = u * u * (3 - 2 * u);
    const r = Math.exp(Math.log(1e6) + (Math.log(10) - Math.log(1e6)) * s);
    const d = sw(`s mid\nV1 a 0 5\nRL a b 1k\nS1 b 0 c 0 SMOD\nVC c 0 ${c}\n.model SMOD SW (RON=10 ROFF=1meg VT=1 VH=0.2)\n.end\n`);
    expect((d.S1 as { resistance: number }).resistance / r).toBeCloseTo(1, 12);
    expect((d.S1 as { current: number }).current).toBeCloseTo(5 / (1000 + r), 12);
  });

  it('switches on the current through its controlling source (current-controlled)', () => {
    // The control loop carries 2 V/1 kΩ = 2 mA through VSENSE, above IT = 1 mA: the switch is RON = 1 Ω.
    const d = sw('w\nV1 a 0 5\nRL a b 100\nW1 b 0 VSENSE WMOD\nV2 c 0 2\nVSENSE c d 0\nRC d 0 1k\n.model WMOD CSW (RON=1 ROFF=1e9 IT=1m IH=0.1m)\n.end\n');
    expect(d.W1).toMatchObject({ type: 'switch', region: 'on', resistance: 1 });
    expect((d.W1 as { control: number }).control).toBeCloseTo(2e-3, 12);
    expect((d.W1 as { current: number }).current).toBeCloseTo(5 / 101, 12);
  });

  it('settles a switch whose control is its own output (a comparator-like loop) without a finding', () => {
    // The switch pulls its own control node down through the divider: the solution lies inside the transition band.
    const a = solved('loop\nV1 a 0 5\nR1 a c 10k\nS1 c 0 c 0 SMOD\n.model SMOD SW (RON=100 ROFF=1meg VT=2.5 VH=0.1)\n.end\n');
    const v = a.operatingPoint!.nodes.c;
    const rec = a.operatingPoint!.devices.S1 as { resistance: number };
    // KCL at c, checked independently: (5 − v)/10k = v/R.
    expect((5 - v) / 10e3).toBeCloseTo(v / rec.resistance, 12);
    expect(a.findings.filter((f) => f.severity === 'error')).toEqual([]);
  });
});

describe('behavioural sources', () => {
  it('gives exact gradients: the program’s slope equals mathjs’s symbolic derivative', async () => {
    // Source: mathjs `derivative` (symbolic differentiation, a general-purpose library) of the same formula.
    const { derivative, evaluate } = await import('mathjs');
    const { compileBehaviour } = await import('../../shared-analysis/src/elaborate/behaviour');
    const { evaluateProgram } = await import('../../shared-analysis/src/devices/behaviour-program');
    const { EvaluationContext, ParamScope } = await import('../../shared-analysis/src/elaborate/expressions');
    const scope = new ParamScope(new EvaluationContext(() => undefined), { label: 'top level' });
    const formula = 'a^2*exp(-b/2) + log(a+3)*sin(b) + sqrt(a*b) - atan(a/b) + tanh(b)^3';
    const written = formula.replace(/\ba\b/g, 'V(x)').replace(/\bb\b/g, 'V(y,z)');
    const c = compileBehaviour({ text: `{${written}}`, span: { start: 0, end: written.length + 2 }, kind: 'expr' }, scope);
    if (!c.ok) throw new Error(c.error.message);
    expect(c.inputs.map((i) => i.kind)).toEqual(['v', 'v']);
    for (const [a, b] of [[0.7, 1.3], [2.5, 0.4], [1e-3, 5]]) {
      const g = new Float64Array(2);
      const r = evaluateProgram(c.program, [a, b], g);
      expect(r.ok).toBe(true);
      if (!r.ok) continue;
      expect(r.value).toBeCloseTo(evaluate(formula, { a, b }), 12);
      const da = derivative(formula, 'a').evaluate({ a, b }) as number;
      const db = derivative(formula, 'b').evaluate({ a, b }) as number;
      expect(Math.abs(g[0] - da)).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(da)));
      expect(Math.abs(g[1] - db)).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(db)));
    }
  });

  it('orders POLY(2) coefficients as P0, P1·x1, P2·x2, P11·x1², P12·x1·x2, P22·x2² (worked by hand)', () => {
    // Hand-worked example (the trade's coefficient order): x1 = V(a) = 2 V, x2 = V(b) = 3 V,
    // P = 1, 2, 3, 4, 5, 6 → 1 + 2·2 + 3·3 + 4·4 + 5·2·3 + 6·9 = 1 + 4 + 9 + 16 + 30 + 54 = 114 V.
    const a = solved('poly\nVA a 0 2\nVB b 0 3\nE1 out 0 POLY(2) a 0 b 0 1 2 3 4 5 6\nRL out 0 1k\n.end\n');
    expect(a.operatingPoint!.nodes.out).toBeCloseTo(114, 12);
    // Fewer coefficients stop early: 1 + 2·2 + 3·3 = 14.
    const b = solved('poly short\nVA a 0 2\nVB b 0 3\nE1 out 0 POLY(2) (a,0) (b,0) 1 2 3\nRL out 0 1k\n.end\n');
    expect(b.operatingPoint!.nodes.out).toBeCloseTo(14, 12);
  });

  it('reads POLY(1) of a controlling current for F and H', () => {
    // I(V1) = −2 mA (the source delivers 2 mA into 1 kΩ); F1 = 0.5 + 3·I → 0.5 − 6 mA… in amperes: 0.5m + 3·(−2m).
    const a = solved('fh\nV1 a 0 2\nR1 a 0 1k\nF1 0 f POLY(1) V1 0.5m 3\nRF f 0 1k\nH1 h 0 POLY(1) V1 1 1k\nRH h 0 1k\n.end\n');
    // F: current 0.5m − 6m = −5.5 mA flows from 0 through F1 to f, i.e. 5.5 mA leaves f: V(f) = −5.5 V.
    expect(a.operatingPoint!.nodes.f).toBeCloseTo(-5.5, 12);
    // H: V = 1 + 1k·(−2 mA) = −1 V.
    expect(a.operatingPoint!.nodes.h).toBeCloseTo(-1, 12);
  });

  it('interpolates a TABLE and holds its end values outside it', () => {
    const out = (v: number): number =>
      solved(`table\nVA a 0 ${v}\nE1 out 0 TABLE {V(a)} = (0, 0) (1, 2) (3, 3)\nRL out 0 1k\n.end\n`).operatingPoint!.nodes.out;
    expect(out(0.5)).toBeCloseTo(1, 12);
    expect(out(2)).toBeCloseTo(2.5, 12);
    expect(out(-1)).toBeCloseTo(0, 12);
    expect(out(7)).toBeCloseTo(3, 12);
  });

  it('solves a nonlinear B source in feedback against an independent scalar Newton, to 1e-9', () => {
    // A current B1 = 1e-3·tanh(V(x)/0.2) leaves node x, fed by 5 V through 10 kΩ: (5 − v)/10k = 1e-3·tanh(v/0.2).
    const a = solved('b loop\nV1 s 0 5\nR1 s x 10k\nB1 x 0 I={1m*tanh(V(x)/0.2)}\n.end\n');
    // Independent solution by bisection (the residual falls monotonically in v).
    let lo = 0;
    let hi = 5;
    for (let k = 0; k < 200; k++) {
      const mid = (lo + hi) / 2;
      if ((5 - mid) / 10e3 - 1e-3 * Math.tanh(mid / 0.2) > 0) lo = mid;
      else hi = mid;
    }
    const v = (lo + hi) / 2;
    expect(Math.abs(a.operatingPoint!.nodes.x - v)).toBeLessThanOrEqual(1e-9 * v);
    expect(a.operatingPoint!.devices.B1).toMatchObject({ type: 'controlled-source' });
  });

  it('names the element, the sub-expression and the point when the function cannot be evaluated', () => {
    const a = analyseNetlist('bad\nV1 a 0 1\nR1 a 0 1k\nB1 b 0 V={log(V(a) - 2)}\nRB b 0 1k\n.end\n');
    const f = a.findings.find((x) => x.code === 'dc-behaviour-not-evaluable');
    expect(f?.message).toMatch(/B1.*V\(a\) = 1\b.*`log\(V\(a\) - 2\)` is not defined there \(log of -1\)/);
    const line = 'B1 b 0 V={log(V(a) - 2)}';
    const text = a.documents[f!.uri]!.text;
    expect(text.slice(f!.span.start, f!.span.end)).toBe('log(V(a) - 2)');
    expect(text.indexOf(line)).toBeGreaterThan(0);
    expect(JSON.stringify(a.operatingPoint)).not.toMatch(/NaN|null/);
  });
});

describe('transmission lines and couplings at DC', () => {
  it('shorts each conductor of a T line from port 1 to port 2', () => {
    // At DC a lossless line has no series resistance (its Z0 and delay describe waves, not DC): Ohm's law across the load.
    const a = solved('line\nV1 a 0 5\nRS a p1 50\nT1 p1 0 p2 0 Z0=50 TD=10n\nRL p2 0 50\n.end\n');
    expect(a.operatingPoint!.nodes.p2).toBeCloseTo(2.5, 12);
    expect(a.operatingPoint!.nodes.p1).toBeCloseTo(2.5, 12);
    expect(a.operatingPoint!.devices.T1).toMatchObject({ type: 'transmission-line' });
    expect((a.operatingPoint!.devices.T1 as { current: number }).current).toBeCloseTo(0.05, 12);
    expect(a.findings.filter((f) => f.code.startsWith('element-not-analysed'))).toEqual([]);
  });

  it('leaves a K coupling with a note and the inductors shorted', () => {
    const a = solved('k\nV1 a 0 1\nL1 a b 1m\nR1 b 0 1k\nL2 c 0 1m\nR2 c 0 1k\nK1 L1 L2 0.99\n.end\n');
    expect(a.operatingPoint!.nodes.b).toBeCloseTo(1, 12);
    expect(a.findings.find((f) => f.code === 'element-not-analysed-no-dc-effect')?.severity).toBe('info');
  });
});

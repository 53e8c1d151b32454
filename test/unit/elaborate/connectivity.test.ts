// Checks the topology checks on small hand-built circuits, including a normal mirror that must pass clean.
import { describe, expect, it } from 'vitest';
import { MODEL_DEFAULTS, type Circuit, type Element, type Model } from '../../../shared-analysis/src/circuit';
import { checkConnectivity } from '../../../shared-analysis/src/checks/connectivity';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

const NPN: Model = { name: 'qn', kind: 'npn', params: { ...MODEL_DEFAULTS.npn }, given: [], origin: { uri: 't', span: { start: 0, end: 1 }, instances: [] } };
const NMOS: Model = { name: 'mn', kind: 'nmos', params: { ...MODEL_DEFAULTS.nmos }, given: [], origin: { uri: 't', span: { start: 0, end: 1 }, instances: [] } };

/**
 * Builds a circuit from compact lines `KIND name node... [value]` (ground is `0`). Element i's card
 * spans [100·i, 100·i + 50) and its node k's token spans [100·i + 10·(k+1), +5), so findings can be located.
 */
function build(lines: string[]): Circuit {
  const nodes = ['0'];
  const byName = new Map([['0', 0]]);
  const index = (n: string) => {
    const k = byName.get(n);
    if (k !== undefined) return k;
    nodes.push(n);
    byName.set(n, nodes.length - 1);
    return nodes.length - 1;
  };
  const elements: Element[] = lines.map((line, i) => {
    const [kind, name, ...rest] = line.split(/\s+/) as [string, string, ...string[]];
    const nodeCount = { R: 2, C: 2, L: 2, V: 2, I: 2, E: 4, G: 4, F: 2, H: 2, D: 2, Q: 3, M: 4 }[kind]!;
    const ns = rest.slice(0, nodeCount).map(index);
    const value = Number(rest[nodeCount] ?? '1');
    const origin = {
      uri: 't',
      span: { start: 100 * i, end: 100 * i + 50 },
      nodeSpans: ns.map((_, k) => ({ start: 100 * i + 10 * (k + 1), end: 100 * i + 10 * (k + 1) + 5 })),
      instances: [],
    };
    const base = { name, nodes: ns, origin };
    switch (kind) {
      case 'R': return { ...base, kind: 'R', resistance: value };
      case 'C': return { ...base, kind: 'C', capacitance: value };
      case 'L': return { ...base, kind: 'L', inductance: value };
      case 'V': return { ...base, kind: 'V', dc: value };
      case 'I': return { ...base, kind: 'I', dc: value };
      case 'E': return { ...base, kind: 'E', gain: value };
      case 'G': return { ...base, kind: 'G', gain: value };
      case 'F': return { ...base, kind: 'F', control: 'V1', gain: value };
      case 'H': return { ...base, kind: 'H', control: 'V1', gain: value };
      case 'D': return { ...base, kind: 'D', model: { ...NPN, kind: 'd', params: { ...MODEL_DEFAULTS.d } }, area: 1, m: 1 };
      case 'Q': return { ...base, kind: 'Q', model: NPN, area: 1, m: 1 };
      default: return { ...base, kind: 'M', model: NMOS, w: 1e-5, l: 1e-6, m: 1 };
    }
  });
  return { title: 't', nodes, elements, models: {}, temperatureC: 27, tnomC: 27, params: {} };
}

interface Expected {
  code: string;
  /** Element index and node slot (or 'card') the finding must point at. */
  at: [number, number | 'card'];
  message?: RegExp;
}

/** Runs the checks and compares codes, locations and message fragments (order-insensitive). */
function check(lines: string[], expected: Expected[]): void {
  const findings = checkConnectivity(build(lines));
  const got = findings.map((f) => ({ code: f.code, span: f.span, message: f.message }));
  expect(got.map((g) => g.code).sort(), JSON.stringify(got, null, 1)).toEqual(expected.map((e) => e.code).sort());
  for (const e of expected) {
    const [i, slot] = e.at;
    const span = slot === 'card' ? { start: 100 * i, end: 100 * i + 50 } : { start: 100 * i + 10 * (slot + 1), end: 100 * i + 10 * (slot + 1) + 5 };
    const f = findings.find((x) => x.code === e.code && x.span.start === span.start && x.span.end === span.end);
    expect(f, `${e.code} at ${JSON.stringify(span)} in ${JSON.stringify(got)}`).toBeDefined();
    if (e.message) expect(f!.message).toMatch(e.message);
  }
}

describe('checkConnectivity', () => {
  it('passes a normal NPN mirror with a resistor reference (no false positives)', () => {
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — the simple two-device mirror topology.
    check(['V Vcc vcc 0 5', 'R R1 vcc ref 4300', 'Q Q1 ref ref 0', 'Q Q2 out ref 0', 'R RL vcc out 1000'], []);
  });

  it('passes an NMOS mirror fed by a current source and a bypass capacitor', () => {
    // Source: Razavi, ch. 5 — the basic MOS mirror; gate node reached through the diode-connected drain.
    check(['V Vdd vdd 0 3.3', 'I Iref vdd g 1e-4', 'M M1 g g 0 0', 'M M2 out g 0 0', 'R RL vdd out 5000', 'C Cb g 0 1e-12'], []);
  });

  it('reports a circuit with nothing on ground at its first element', () => {
    check(['V V1 a b 5', 'R R1 a b 1000'], [{ code: 'no-ground-node', at: [0, 'card'] }]);
  });

  it('reports a node with one terminal at that terminal', () => {
    check(['V V1 a 0 5', 'R R1 a 0 1000', 'R R2 a typo 1000'], [{ code: 'node-single-connection', at: [2, 1], message: /`typo` connects only to `R2`/ }]);
  });

  it('reports a group isolated by a capacitor, naming its nodes', () => {
    check(
      ['V V1 a 0 5', 'R R1 a 0 1000', 'C C1 a b 1e-9', 'R R2 b c 1000', 'R R3 c b 1000'],
      [{ code: 'node-no-dc-path', at: [2, 1], message: /Nodes `b`, `c` have no DC path to ground/ }],
    );
  });

  it('treats MOSFET gates and controlled-source inputs as open', () => {
    check(
      ['V V1 d 0 5', 'R R1 d 0 1000', 'M M1 d g 0 0', 'C C1 g 0 1e-12'],
      [{ code: 'node-no-dc-path', at: [2, 1], message: /Node `g` has no DC path/ }],
    );
    check(
      ['V V1 a 0 5', 'R R1 a 0 1000', 'E E1 o 0 s 0 2', 'R R2 o 0 1000', 'C C1 s a 1e-12'],
      [{ code: 'node-no-dc-path', at: [2, 2] }],
    );
  });

  it('reports a dangling capacitor end once, as no DC path', () => {
    check(['V V1 a 0 5', 'R R1 a 0 1000', 'C C1 a x 1e-9'], [{ code: 'node-no-dc-path', at: [2, 1], message: /only one terminal/ }]);
  });

  it('reports a loop of voltage sources at the closing element with the members', () => {
    check(['V V1 a 0 5', 'V V2 a 0 3', 'R R1 a 0 1000'], [{ code: 'voltage-source-loop', at: [1, 'card'], message: /`V1`, `V2` form a loop.*sum exactly to zero/ }]);
    check(
      ['V V1 a 0 5', 'L L1 a b 1e-3', 'L L2 b 0 1e-3', 'R R1 a 0 1000'],
      [{ code: 'voltage-source-loop', at: [2, 'card'], message: /`V1`, `L1`, `L2` form a loop.*inductor is a short/ }],
    );
    check(['V V1 a 0 5', 'E E1 a 0 b 0 2', 'R R1 b 0 1000'], [{ code: 'voltage-source-loop', at: [1, 'card'], message: /`V1`, `E1` form a loop/ }]);
    check(['V V1 a 0 5', 'H H1 a 0 2', 'R R1 a 0 1000'], [{ code: 'voltage-source-loop', at: [1, 'card'], message: /`V1`, `H1` form a loop/ }]);
    check(['V V1 a a 5', 'R R1 a 0 1'], [{ code: 'voltage-source-loop', at: [0, 'card'], message: /both ends on node `a`/ }]);
  });

  it('reports a group fed only by current sources, with their net current', () => {
    // Two 1 mA sources push 2 mA into node x, which has nowhere to go: KCL cannot hold (common practice).
    check(
      ['V V1 a 0 5', 'R R1 a 0 1000', 'I I1 a x 1e-3', 'I I2 0 x 1e-3', 'R R2 x y 1000', 'C C1 y 0 1e-9'],
      [{ code: 'current-source-cutset', at: [2, 1], message: /Nodes `x`, `y` are joined.*`I1`, `I2`.*2 mA/ }],
    );
    // A single source in series with a capacitor.
    check(
      ['V V1 a 0 5', 'R R1 a 0 1000', 'I I1 a x 1e-6', 'C C1 x 0 1e-9'],
      [{ code: 'current-source-cutset', at: [2, 1], message: /Node `x` is joined.*`I1`/ }],
    );
  });

  it('joins BJT terminals and MOSFET drain, source and bulk', () => {
    check(['V V1 a 0 5', 'R R1 a c 1000', 'Q Q1 c b e', 'R R2 e 0 100', 'R R3 b 0 1000'], []);
    check(['V V1 a 0 5', 'R R1 a d 1000', 'M M1 d a s s', 'R R2 s 0 100'], []);
  });

  it('traces a dangling node inside a subcircuit back to its instance card', () => {
    const text = 'traced\n.subckt pad a b\nR1 a b 1k\n.ends\nV1 n 0 5\nR0 n 0 1k\nX1 n open pad\n';
    const circuit = elaborate(parse('/t.cir', text, { hasTitle: true }), new MemoryWorkspace()).circuit;
    const findings = checkConnectivity(circuit);
    expect(findings.map((f) => f.code)).toEqual(['node-single-connection']);
    const f = findings[0]!;
    expect(text.slice(f.span.start, f.span.end)).toBe('b'); // the inner card's node token
    expect(f.message).toContain('`open` connects only to `X1.R1`');
    expect(text.slice(f.related![0]!.span.start, f.related![0]!.span.end)).toBe('X1 n open pad');
  });

  it('stays linear on a long ladder', () => {
    const lines = ['V V1 n0 0 1'];
    for (let k = 0; k < 50000; k++) lines.push(`R R${k} n${k} n${k + 1} 1`);
    lines.push('R Rend n50000 0 1');
    check(lines, []);
  });
});

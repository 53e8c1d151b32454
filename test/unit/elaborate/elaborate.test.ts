// Checks elaboration of inline netlists: includes, library sections, models, scopes, flattening and every finding with its span.
import { describe, expect, it } from 'vitest';
import { elaborate, type ElaborationResult } from '../../../shared-analysis/src/elaborate/index';
import { NETLIST_CODES } from '../../../shared-analysis/src/checks/netlist';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import type { ElementCard, ParsedDocument } from '../../../shared-analysis/src/syntax/ast';
import type { Element } from '../../../shared-analysis/src/circuit';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

const ROOT = '/w/top.cir';

/** A place in a document: the first occurrence of a text, or of `text` inside the first occurrence of `in` (a line, say). */
type At = string | { in: string; text: string };

interface ExpectedFinding {
  code: string;
  at: At;
  /** Document the finding is in (default: the root). */
  uri?: string;
  message?: RegExp;
}

interface ExpectedElement {
  kind?: Element['kind'];
  /** Node names in node order. */
  nodes?: string[];
  /** The element's main number: resistance, capacitance, inductance, DC value or gain. */
  value?: number;
  area?: number;
  m?: number;
  w?: number;
  l?: number;
  model?: string;
  control?: string;
}

interface Expected {
  /** Exactly these findings (codes compared as a multiset; each must be at its place). */
  findings?: ExpectedFinding[];
  /** Elements by hierarchical name; `null` means the element must be absent. */
  elements?: Record<string, ExpectedElement | null>;
  /** The full node list, in order. */
  nodes?: string[];
  /** Extra checks on the result. */
  also?: (r: ElaborationResult) => void;
}

/** Elaborates `files` (or a single root text) and compares findings, elements and nodes with `expected`. */
function check(files: string | Record<string, string>, expected: Expected, options: Parameters<typeof elaborate>[2] = {}): ElaborationResult {
  const all = typeof files === 'string' ? { [ROOT]: files } : files;
  const ws = new MemoryWorkspace(all);
  const root = parse(ROOT, all[ROOT]!, { hasTitle: true });
  const r = elaborate(root, ws, options);
  const shown = JSON.stringify(r.findings.map((f) => ({ code: f.code, uri: f.uri, text: textOf(r.documents, f.uri, f.span), message: f.message })), null, 1);
  if (expected.findings) {
    expect(r.findings.map((f) => f.code).sort(), shown).toEqual(expected.findings.map((f) => f.code).sort());
    for (const e of expected.findings) {
      const uri = e.uri ?? ROOT;
      const doc = r.documents[uri];
      expect(doc, `document ${uri}`).toBeDefined();
      const span = locate(doc!.text, e.at);
      const f = r.findings.find((x) => x.code === e.code && x.uri === uri && x.span.start === span.start && x.span.end === span.end);
      expect(f, `${e.code} at ${JSON.stringify(e.at)} in ${uri}\n${shown}`).toBeDefined();
      if (e.message) expect(f!.message).toMatch(e.message);
    }
  }
  for (const f of r.findings) {
    // Every finding lies inside its document, has a known code and a full-sentence message.
    const doc = r.documents[f.uri];
    expect(doc, f.code).toBeDefined();
    expect(f.span.start).toBeGreaterThanOrEqual(0);
    expect(f.span.end).toBeLessThanOrEqual(doc!.text.length);
    expect(NETLIST_CODES[f.code], f.code).toBeDefined();
    expect(f.severity).toBe(NETLIST_CODES[f.code]!.severity);
    expect(f.message).toMatch(/[.?]$/);
  }
  if (expected.elements) {
    for (const [name, want] of Object.entries(expected.elements)) {
      const el = r.circuit.elements.find((e) => e.name === name);
      if (want === null) {
        expect(el, `${name} must be absent`).toBeUndefined();
        continue;
      }
      expect(el, `${name} in ${r.circuit.elements.map((e) => e.name).join(' ')}`).toBeDefined();
      const got = describe1(el!, r.circuit.nodes);
      for (const [k, v] of Object.entries(want)) {
        if (typeof v === 'number') expect(got[k] as number, `${name}.${k}`).toBeCloseTo(v, 12 - Math.max(0, Math.ceil(Math.log10(Math.abs(v) || 1))));
        else expect(got[k], `${name}.${k}`).toEqual(v);
      }
    }
  }
  if (expected.nodes) expect(r.circuit.nodes).toEqual(expected.nodes);
  expected.also?.(r);
  return r;
}

function describe1(el: Element, nodes: string[]): Record<string, unknown> {
  const out: Record<string, unknown> = { kind: el.kind, nodes: el.nodes.map((k) => nodes[k]) };
  switch (el.kind) {
    case 'R': out.value = el.resistance; break;
    case 'C': out.value = el.capacitance; break;
    case 'L': out.value = el.inductance; break;
    case 'V':
    case 'I': out.value = el.dc; break;
    case 'E':
    case 'G': out.value = el.gain; break;
    case 'F':
    case 'H': out.value = el.gain; out.control = el.control; break;
    case 'D':
    case 'Q': out.area = el.area; out.m = el.m; out.model = el.model.name; break;
    case 'M': out.w = el.w; out.l = el.l; out.m = el.m; out.model = el.model.name; break;
  }
  return out;
}

function locate(text: string, at: At): { start: number; end: number } {
  const outer = typeof at === 'string' ? at : at.in;
  const base = text.indexOf(outer);
  if (base < 0) throw new Error(`'${outer}' not in document`);
  const inner = typeof at === 'string' ? 0 : outer.indexOf(at.text);
  if (inner < 0) throw new Error(`'${(at as { text: string }).text}' not in '${outer}'`);
  return { start: base + inner, end: base + inner + (typeof at === 'string' ? at : at.text).length };
}

function textOf(docs: Record<string, ParsedDocument>, uri: string, span: { start: number; end: number }): string {
  return docs[uri]?.text.slice(span.start, span.end) ?? '?';
}

const NPN = '.model qn npn\n';

describe('values and sources', () => {
  // Source: engineering suffixes and source forms as in the README, "The netlist dialect" (common practice).
  it('reads numbers, expressions, bare parameter names and the DC value of each source form', () => {
    check(
      `values\n.param rb=2.2k\nV1 a 0 DC 5\nV2 b 0 3.3\nV3 c 0 PULSE(1.5 5 0 1n 1n 1u 2u)\nI1 0 d 100uA\nR1 a b 10kOhm\nR2 b c {2*rb}\nR3 c d rb\nR4 d 0 1MEG\nC1 a 0 10p\nL1 c d 1u\n`,
      {
        findings: [],
        elements: {
          V1: { kind: 'V', nodes: ['a', '0'], value: 5 },
          V2: { value: 3.3 },
          V3: { value: 1.5 },
          I1: { kind: 'I', nodes: ['0', 'd'], value: 1e-4 },
          R1: { value: 1e4 },
          R2: { value: 4400 },
          R3: { value: 2200 },
          R4: { value: 1e6 },
          C1: { value: 1e-11 },
          L1: { value: 1e-6 },
        },
        nodes: ['0', 'a', 'b', 'c', 'd'],
      },
    );
  });

  it('divides a resistor by its parallel count M', () => {
    // Source: M identical resistors in parallel give R/M (common practice).
    check(`m\nV1 a 0 1\nR1 a 0 10k M=4\n`, { findings: [], elements: { R1: { value: 2500 } } });
  });

  it('rejects the resistor-marking style and failed expressions at their spot', () => {
    check(`bad values\nV1 a 0 5\nR1 a 0 4k7\nR2 a 0 {1k/(2-2)}\nR3 a 0 {rnope}\nR4 a 0 e\n`, {
      findings: [
        { code: 'element-value-invalid', at: { in: 'R4 a 0 e', text: 'e' }, message: /`e` is neither a number nor a parameter in scope/ },
        { code: 'element-value-invalid', at: '4k7', message: /write 4\.7k/ },
        { code: 'element-value-invalid', at: '(2-2)', message: /Division by zero: `\(2-2\)` is 0/ },
        { code: 'element-value-invalid', at: 'rnope', message: /not a parameter in scope/ },
      ],
      elements: { R1: null, R2: null, R3: null, R4: null },
    });
  });

  it('drops the nodes only a left-out element touched, so nothing is left floating', () => {
    check(`dropped\nV1 a 0 5\nR0 a 0 1k\nR1 a b 4k7\n`, { findings: [{ code: 'element-value-invalid', at: '4k7' }], nodes: ['0', 'a'] });
  });

  it('notes a 0 Ω resistor as a short and warns about a negative one', () => {
    // Source: 0 Ω resistors are stocked parts used as jumpers and option links on boards (common practice, from memory).
    const r = check(`zero\nV1 a 0 5\nR1 a b 0\nR2 b 0 -1k\n`, {
      findings: [
        { code: 'resistor-zero-value', at: { in: 'R1 a b 0', text: '0' }, message: /solved as a short and the current through it is reported/ },
        { code: 'resistor-negative-value', at: '-1k' },
      ],
      elements: { R1: { value: 0 }, R2: { value: -1000 } },
    });
    expect(r.findings.find((f) => f.code === 'resistor-zero-value')!.severity).toBe('info');
    expect(r.findings.find((f) => f.code === 'resistor-negative-value')!.severity).toBe('warning');
  });

  it('takes a source whose value fails as 0 and says so', () => {
    check(`bad source\nV1 a 0 {nope}\nR1 a 0 1k\n`, {
      findings: [{ code: 'element-value-invalid', at: 'nope', message: /The source is taken as 0 V\.$/ }],
      elements: { V1: { value: 0 } },
    });
  });

  it('takes a source without a value as 0 and says so', () => {
    check(`missing\nV1 a 0\nR1 a 0 1k\n`, {
      findings: [{ code: 'element-value-missing', at: 'V1', message: /taken as 0 V/ }],
      elements: { V1: { value: 0 } },
    });
  });

  it('warns about values beyond 1e15 and unknown instance parameters', () => {
    check(`range\nV1 a 0 5\nR1 a 0 2e16\nR2 a 0 1k tcx=0.01\n`, {
      findings: [
        { code: 'value-out-of-range', at: '2e16' },
        { code: 'element-unknown-parameter', at: 'tcx', message: /it reads M, RATEDPOWER, TC1, TC2, TC, L, W/ },
      ],
    });
  });

  it('says how a resistor tolerance is written when a card gives it as a parameter', () => {
    check(`tolerance as a parameter\nV1 a 0 5\nR1 a 0 1k tol=1%\n`, {
      findings: [{ code: 'element-unknown-parameter', at: { in: 'R1 a 0 1k tol=1%', text: 'tol' }, message: /It is ignored\. A resistor's tolerance is written after the card as a comment: `; tol 1%`\.$/ }],
    });
  });

  it('rejects an expression used as a node name', () => {
    check(`node\n.param n=1\nV1 a 0 5\nR1 a {n} 1k\n`, { findings: [{ code: 'node-name-invalid', at: '{n}' }], elements: { R1: null } });
  });

  it('skips analysis cards silently and notes a sweep once per kind', () => {
    check(`ignored\nV1 a 0 5\nR1 a 0 1k\n.tran 1n 1u\n.step param r 1k 2k 100\n.meas tran t1 when v(a)=2\n.step temp 0 50 10\n`, {
      findings: [{ code: 'card-ignored', at: '.step' }],
    });
  });
});

describe('parameters', () => {
  it('resolves forward references, reports cycles once with the chain, and keeps the later duplicate', () => {
    check(`params\n.param r2={r1*2}\n.param r1=1k\n.param a={b} b={a}\n.param k=1 k=2\nV1 x 0 5\nR1 x 0 {r2}\nR2 x 0 {k}\nR3 x 0 {a}\n`, {
      findings: [
        { code: 'param-cycle', at: { in: 'b={a}', text: 'a' }, message: /a → b → a/ },
        { code: 'param-duplicate', at: { in: 'k=2', text: 'k' } },
        { code: 'element-value-invalid', at: { in: 'R3 x 0 {a}', text: '{a}' }, message: /depends on parameter `a`, which has no value/ },
      ],
      elements: { R1: { value: 2000 }, R2: { value: 2 }, R3: null },
      also: (r) => {
        expect(r.circuit.params).toMatchObject({ r1: 1000, r2: 2000, k: 2 });
        const a = r.symbols.params.find((p) => p.name === 'a')!;
        expect(a.value).toBeUndefined();
        expect(r.symbols.params.find((p) => p.name === 'r2')).toMatchObject({ value: 2000, scope: '', expression: '{r1*2}' });
      },
    });
  });

  it('reports a parameter whose expression fails, at the failing part', () => {
    check(`bad param\n.param g={sqrt(-4)}\nV1 a 0 5\nR1 a 0 1k\n`, { findings: [{ code: 'param-invalid', at: 'sqrt(-4)' }] });
  });
});

describe('includes and library sections', () => {
  it('reads nested includes relative to the including file', () => {
    check(
      {
        [ROOT]: `nested\n.include lib/models.inc\nV1 vcc 0 {vsupply}\nR1 vcc b 10k\nQ1 b b 0 qfast\n`,
        '/w/lib/models.inc': `.include "../common/supply.inc"\n.model qfast npn (bf=200)\n`,
        '/w/common/supply.inc': `.param vsupply=12\n`,
      },
      {
        findings: [],
        elements: { V1: { value: 12 }, Q1: { model: 'qfast' } },
        also: (r) => {
          expect(Object.keys(r.documents).sort()).toEqual(['/w/common/supply.inc', '/w/lib/models.inc', ROOT]);
          expect(r.symbols.includes).toEqual([
            { uri: ROOT, span: locate(r.documents[ROOT]!.text, 'lib/models.inc'), target: '/w/lib/models.inc', found: true },
            { uri: '/w/lib/models.inc', span: locate(r.documents['/w/lib/models.inc']!.text, '"../common/supply.inc"'), target: '/w/common/supply.inc', found: true },
          ]);
        },
      },
    );
  });

  it('reports a missing file at its path', () => {
    check(`missing\n.include nowhere.inc\nV1 a 0 5\nR1 a 0 1k\n`, {
      findings: [{ code: 'include-not-found', at: 'nowhere.inc', message: /\/w\/nowhere\.inc/ }],
      also: (r) => expect(r.symbols.includes[0]).toMatchObject({ target: '/w/nowhere.inc', found: false }),
    });
  });

  it('reports an include cycle naming the chain, and a repeated include once', () => {
    check(
      {
        [ROOT]: `cycle\n.include a.inc\n.include b.inc\nV1 x 0 {pa}\nR1 x 0 1k\n`,
        '/w/a.inc': `.param pa=1\n.include b.inc\n`,
        '/w/b.inc': `.include a.inc\n`,
      },
      {
        findings: [
          { code: 'include-cycle', at: 'a.inc', uri: '/w/b.inc', message: /top\.cir → a\.inc → b\.inc → a\.inc/ },
          { code: 'include-repeated', at: 'b.inc', message: /already read/ },
        ],
        elements: { V1: { value: 1 } },
      },
    );
  });

  it('stops following includes nested deeper than the limit', () => {
    const files: Record<string, string> = { [ROOT]: 'deep\n.include d1.inc\nV1 a 0 1\nR1 a 0 1\n' };
    for (let k = 1; k <= 70; k++) files[`/w/d${k}.inc`] = `.include d${k + 1}.inc\n`;
    check(files, { findings: [{ code: 'include-too-deep', at: 'd64.inc', uri: '/w/d63.inc', message: /more than 64 files deep/ }] });
  });

  it('uses only the named section of a library and lists the sections when one is missing', () => {
    const lib = `* corner library\n.lib typical\n.model qlib npn (bf=100)\n.endl typical\n.lib fast\n.model qlib npn (bf=250)\n.endl fast\n`;
    check(
      { [ROOT]: `lib\n.lib "corners.lib" fast\nV1 a 0 5\nR1 a b 1k\nQ1 b b 0 qlib\n`, '/w/corners.lib': lib },
      { findings: [], also: (r) => expect(r.circuit.models['qlib']!.params['BF']).toBe(250) },
    );
    check(
      { [ROOT]: `lib\n.lib corners.lib slow\nV1 a 0 5\nR1 a 0 1k\n`, '/w/corners.lib': lib },
      { findings: [{ code: 'library-section-not-found', at: 'slow', message: /`typical`, `fast`/ }] },
    );
  });

  it('skips section definitions when a library is read as a whole', () => {
    check(
      { [ROOT]: `sections\n.include parts.lib\nV1 a 0 5\nR1 a 0 1k\n`, '/w/parts.lib': `.model qy npn\n.lib other\n.model qx npn\n.endl\n` },
      { findings: [], also: (r) => expect(Object.keys(r.circuit.models)).toEqual(['qy']) },
    );
  });
});

describe('models', () => {
  // Source: the defaults of docs/DEVICE-MODELS.md (Gummel–Poon defaults: IS 1e-16, BF 100, …, XTB 0).
  it('fills defaults and records what the card gave; VAF=0 means no Early effect (common practice)', () => {
    check(`model\n.model qn npn (BF=150 vaf=0)\nV1 a 0 5\nR1 a b 1k\nQ1 b b 0 QN\n`, {
      findings: [],
      also: (r) => {
        const m = r.circuit.models['qn']!;
        expect(m.kind).toBe('npn');
        expect(m.params).toEqual({
          IS: 1e-16, BF: 150, BR: 1, NF: 1, NR: 1, VAF: Infinity, VAR: Infinity, IKF: Infinity, IKR: Infinity,
          ISE: 0, NE: 1.5, ISC: 0, NC: 2, RB: 0, RE: 0, RC: 0, XTI: 3, EG: 1.11, XTB: 0,
        });
        expect(m.given.sort()).toEqual(['BF', 'VAF']);
        expect(r.symbols.models[0]).toMatchObject({ name: 'qn', kind: 'npn', key: 'qn' });
      },
    });
  });

  it('warns about unknown parameters naming the used ones, notes unmodelled ones, and rejects out-of-range values', () => {
    check(`model params\n.model qn npn (BFF=120 VA=50 RBM=100 CJE=1p IS=-1e-15 BF=0)\n.model mn nmos (KP=-1 LEVEL=3)\n.model dd d (N=0)\n`, {
      findings: [
        { code: 'model-unknown-parameter', at: 'BFF', message: /IS, BF, BR, NF, NR, VAF, VAR, IKF/ },
        // VA is the family's other spelling of VAF (common practice, from memory): read as VAF, with one note.
        { code: 'model-parameter-alias', at: 'qn', message: /VA as VAF/ },
        { code: 'model-parameter-ignored', at: 'qn', message: /RBM, CJE.*RBM would shift the bias point/ },
        { code: 'model-parameter-invalid', at: '-1e-15', message: /IS=-1e-15.*greater than 0.*default 1e-16/ },
        { code: 'model-parameter-invalid', at: { in: 'BF=0', text: '0' }, message: /BF=0/ },
        { code: 'model-parameter-invalid', at: { in: 'KP=-1', text: '-1' }, message: /KP=-1/ },
        { code: 'model-level-approximated', at: 'LEVEL=3', message: /level-1 approximation.*KP at its level-1 default/ },
        { code: 'model-parameter-invalid', at: { in: 'N=0', text: '0' }, message: /N=0/ },
      ],
      also: (r) => {
        expect(r.circuit.models['qn']!.params['IS']).toBe(1e-16);
        expect(r.circuit.models['qn']!.params['BF']).toBe(100);
        expect(r.circuit.models['qn']!.params['VAF']).toBe(50);
        expect(r.circuit.models['mn']!.params['KP']).toBe(2e-5);
      },
    });
  });

  // Source: Shichman–Hodges level-1 model as in docs/DEVICE-MODELS.md, "PMOS mirrors every sign" — an enhancement
  // NMOS has VTO > 0 and an enhancement PMOS VTO < 0; a VTO of the other sign conducts at VGS = 0 V
  // (depletion mode) (common practice, from memory).
  it('warns about a PMOS threshold with the sign of a depletion device and notes a depletion NMOS', () => {
    const r = check(
      `thresholds\n.param vtp=0.7\n.model PCORE PMOS (KP=45u VTO=0.6)\n.model pref pmos (vto={vtp})\n.model NDEP NMOS (VTO=-1.2)\n` +
        `.model nok nmos (VTO=0.55)\n.model pok pmos (VTO=-0.6)\n.model pzero pmos (VTO=0)\n.model pdefault pmos (KP=40u)\n`,
      {
        findings: [
          { code: 'model-threshold-sign', at: 'VTO=0.6', message: /^PCORE is PMOS with VTO = \+0\.6 V: .*depletion-mode device, on at VGS = 0 V; an enhancement PMOS has a negative VTO such as \u22120\.6 V\./ },
          { code: 'model-threshold-sign', at: 'vto={vtp}', message: /VTO = \+0\.7 V.*such as \u22120\.7 V/ },
          { code: 'model-threshold-depletion', at: 'VTO=-1.2', message: /^NDEP is NMOS with VTO = \u22121\.2 V: .*depletion-mode.*positive VTO such as \+1\.2 V\./ },
        ],
        also: (r) => {
          // The value is used as written; only a note is added.
          expect(r.circuit.models['pcore']!.params['VTO']).toBe(0.6);
          expect(r.circuit.models['ndep']!.params['VTO']).toBe(-1.2);
        },
      },
    );
    expect(r.findings.find((f) => f.code === 'model-threshold-sign')!.severity).toBe('warning');
    expect(r.findings.find((f) => f.code === 'model-threshold-depletion')!.severity).toBe('info');
  });

  it('reports a threshold-sign slip inside a subcircuit once, however many instances use it', () => {
    check(`sub threshold\n.subckt load d s\n.model pl pmos (VTO=0.5)\nM1 d d s s pl W=10u L=1u\n.ends\nV1 vdd 0 3\nX1 a vdd load\nX2 b vdd load\nR1 a 0 10k\nR2 b 0 10k\n`, {
      findings: [{ code: 'model-threshold-sign', at: 'VTO=0.5' }],
    });
  });

  it('reports unknown types, duplicates, missing models (with fix data) and wrong kinds', () => {
    check(`models\n.model qa npx\n.model qb npn\n.model QB pnp\n.model mn nmos\nV1 a 0 5\nR1 a b 1k\nQ1 b b 0 qmissing\nQ2 b b 0 mn\nQ3 b b 0 qa\nQ4 b b 0 qb\n`, {
      findings: [
        { code: 'model-unknown-type', at: 'npx' },
        { code: 'model-duplicate', at: 'QB' },
        { code: 'model-not-found', at: 'qmissing' },
        { code: 'model-wrong-kind', at: { in: 'Q2 b b 0 mn', text: 'mn' }, message: /needs a NPN or PNP model/ },
      ],
      elements: { Q1: null, Q2: null, Q3: null, Q4: { model: 'qb' } },
      also: (r) => {
        const nf = r.findings.find((f) => f.code === 'model-not-found')!;
        expect(nf.data).toEqual({ modelName: 'qmissing', expectedKinds: ['npn', 'pnp'] });
        expect(r.circuit.models['qb']!.kind).toBe('npn');
      },
    });
  });

  it('looks models up case-insensitively, subcircuit-local first', () => {
    check(`local\n.model qm npn (bf=100)\n.subckt cell c\n.model qm npn (bf=300)\nQ1 c c 0 QM\n.ends\nV1 a 0 5\nR1 a b 1k\nX1 b cell\nQ2 b b 0 qm\n`, {
      findings: [],
      also: (r) => {
        const q1 = r.circuit.elements.find((e) => e.name === 'X1.Q1')!;
        const q2 = r.circuit.elements.find((e) => e.name === 'Q2')!;
        expect(q1.kind === 'Q' && q1.model.params['BF']).toBe(300);
        expect(q2.kind === 'Q' && q2.model.params['BF']).toBe(100);
        expect(Object.keys(r.circuit.models).sort()).toEqual(['qm', 'x1.qm']);
      },
    });
  });
});

describe('devices', () => {
  it('reads area and M, and replaces a non-positive one by 1', () => {
    check(`area\n${NPN}V1 a 0 5\nR1 a b 1k\nQ1 b b 0 qn 2\nQ2 a b 0 qn 0\nQ3 a b 0 qn M=-2\nQ4 a b 0 qn area=3 M=2\n`, {
      findings: [
        { code: 'device-area-invalid', at: { in: 'qn 0\n', text: '0' }, message: /1 is used and the analysis continues/ },
        { code: 'device-area-invalid', at: '-2' },
      ],
      elements: { Q1: { area: 2, m: 1 }, Q2: { area: 1 }, Q3: { m: 1 }, Q4: { area: 3, m: 2 } },
    });
  });

  it('reads MOSFET sizes, defaults missing ones to 10 µm and flags sizes outside 1 nm to 1 m', () => {
    check(`mos\n.model mn nmos\nV1 d 0 5\nM1 d d 0 0 mn W=20u L=2u\nM2 d d 0 0 mn\nM3 d d 0 0 mn W=10 L=1u\n`, {
      findings: [
        { code: 'mosfet-geometry-missing', at: 'M2', message: /W and L = 10 µm/ },
        { code: 'value-out-of-range', at: { in: 'W=10 ', text: '10' }, message: /write 10u/ },
      ],
      elements: { M1: { w: 20e-6, l: 2e-6, m: 1 }, M2: { w: 1e-5, l: 1e-5 }, M3: { w: 10 } },
    });
  });

  it('resolves F and H controls and reports a missing one', () => {
    check(`controls\nV1 a 0 5\nVsense a b 0\nR1 b 0 1k\nF1 0 c Vsense 2\nR2 c 0 1k\nH1 d 0 Vnone 100\nR3 d 0 1k\nH2 e 0 R1 1\nR4 e 0 1k\n`, {
      findings: [
        { code: 'controlled-source-control-missing', at: 'Vnone', message: /no voltage source has that name/ },
        { code: 'controlled-source-control-missing', at: { in: 'H2 e 0 R1', text: 'R1' }, message: /not a voltage source/ },
      ],
      elements: { F1: { kind: 'F', control: 'Vsense', value: 2 }, H1: null, H2: null },
    });
  });

  it('reports duplicate element names case-insensitively with the first as related', () => {
    const r = check(`dups\nV1 a 0 5\nR1 a 0 1k\nr1 a 0 2k\n`, { findings: [{ code: 'element-duplicate-name', at: 'r1' }], elements: { R1: { value: 1000 }, r1: null } });
    expect(r.findings[0]!.related![0]!.span).toEqual(locate(r.documents[ROOT]!.text, 'R1'));
  });

  it('compares names as their lower case does, beyond ASCII too: a Kelvin sign is a k, an ß is not SS', () => {
    // Unicode's case mappings (UnicodeData.txt): U+212A KELVIN SIGN lower-cases to U+006B, and U+00DF lower-cases to itself
    // (its upper case is SS), so "Rß" and "RSS" differ in lower case while "R\u212A1" and "Rk1" are the same.
    check(`dups\nV1 a 0 5\nRk1 a 0 1k\nR\u212A1 a 0 2k\nRß a 0 3k\nRSS a 0 4k\nX1 a SUB\nx1.r1 a 0 5k\n.subckt SUB p\nR1 p 0 6k\n.ends\n`, {
      findings: [
        { code: 'element-duplicate-name', at: 'R\u212A1' },
        { code: 'element-duplicate-name', at: 'x1.r1' },
      ],
      elements: { Rk1: { value: 1000 }, 'R\u212A1': null, 'Rß': { value: 3000 }, RSS: { value: 4000 }, 'X1.R1': { value: 6000 }, 'x1.r1': null },
    });
  });

  it('reports an element with the wrong node count (hand-built card)', () => {
    const text = 'hand\nE1 a 0 2\n';
    const name = { text: 'E1', span: { start: 5, end: 7 }, kind: 'word' as const };
    const card: ElementCard = {
      kind: 'element',
      letter: 'E',
      name,
      nodes: [
        { text: 'a', span: { start: 8, end: 9 }, kind: 'word' },
        { text: '0', span: { start: 10, end: 11 }, kind: 'word' },
      ],
      value: { text: '2', span: { start: 12, end: 13 }, kind: 'word' },
      params: [],
      span: { start: 5, end: 13 },
      tokens: [],
    };
    const doc: ParsedDocument = { uri: ROOT, text, cards: [{ kind: 'title', text: 'hand', span: { start: 0, end: 4 }, tokens: [] }, card], errors: [] };
    const r = elaborate(doc, new MemoryWorkspace());
    expect(r.findings.map((f) => [f.code, f.span])).toEqual([['element-node-count', { start: 5, end: 7 }]]);
    expect(r.circuit.elements).toEqual([]);
  });
});

describe('subcircuits', () => {
  it('flattens nested instances with hierarchical names, port mapping and a shared ground', () => {
    check(
      `nested\n${NPN}.subckt stage in out\nR1 in mid 1k\nQ1 out mid gnd qn\n.ends\n.subckt pair a b\nX1 a m stage\nX2 m b stage\nR9 m 0 10k\n.ends\nV1 vin 0 5\nXP vin vout pair\nRL vout 0 1k\n`,
      {
        findings: [],
        elements: {
          'XP.X1.R1': { nodes: ['vin', 'XP.X1.mid'] },
          'XP.X1.Q1': { nodes: ['XP.m', 'XP.X1.mid', '0'] },
          'XP.X2.R1': { nodes: ['XP.m', 'XP.X2.mid'] },
          'XP.X2.Q1': { nodes: ['vout', 'XP.X2.mid', '0'] },
          'XP.R9': { nodes: ['XP.m', '0'] },
        },
        also: (r) => {
          const q = r.circuit.elements.find((e) => e.name === 'XP.X2.Q1')!;
          expect(q.origin.instances.map((i) => i.name)).toEqual(['XP', 'X2']);
          expect(r.documents[ROOT]!.text.slice(q.origin.span.start, q.origin.span.end)).toBe('Q1 out mid gnd qn');
          expect(q.origin.nodeSpans!.map((s) => r.documents[ROOT]!.text.slice(s.start, s.end))).toEqual(['out', 'mid', 'gnd']);
          expect(r.documents[ROOT]!.text.slice(q.origin.modelSpan!.start, q.origin.modelSpan!.end)).toBe('qn');
          expect(r.symbols.subckts.map((s) => [s.name, s.ports])).toEqual([['stage', ['in', 'out']], ['pair', ['a', 'b']]]);
        },
      },
    );
  });

  // Decision (documented in the code table): parameters on the .subckt line are a definition's
  // interface; a .param inside the body is local, so an instance cannot set it (common practice, from memory).
  // Setting a subcircuit's internal .param from the instance line is a convention of process kits (common practice, from memory).
  it('applies an instance override of a body .param to that instance only', () => {
    check(`local param\n.subckt load a gain=2\n.param r={gain*1k}\nR1 a 0 {r}\n.ends\nV1 x 0 5\nX1 x load r=500\nX2 x load\n`, {
      findings: [],
      elements: { 'X1.R1': { value: 500 }, 'X2.R1': { value: 2000 } },
    });
  });

  it('applies defaults, overrides evaluated in the caller, body parameters and outer parameters', () => {
    check(
      `params\n.param unit=1k\n.subckt load a gain=2 PARAMS: off=0\n.param r={gain*unit+off}\nR1 a 0 {r}\n.ends\nV1 x 0 5\nX1 x load\nX2 x load gain=5\nX3 x load gain={unit/100} off=7\nX4 x load gian=3\n`,
      {
        findings: [{ code: 'subckt-unknown-parameter', at: 'gian', message: /declares gain, off/ }],
        elements: { 'X1.R1': { value: 2000 }, 'X2.R1': { value: 5000 }, 'X3.R1': { value: 10007 }, 'X4.R1': { value: 2000 } },
        also: (r) => {
          const s = r.symbols.subckts.find((x) => x.name === 'load')!;
          expect(s.params).toEqual({ gain: 2, off: 0 });
          expect(r.symbols.params.filter((p) => p.scope === 'load').map((p) => [p.name, p.value])).toEqual([['gain', 2], ['off', 0], ['r', 2000]]);
        },
      },
    );
  });

  it('reports unknown subcircuits, port-count mismatches and recursion', () => {
    check(
      `subckt errors\n.subckt two a b\nR1 a b 1k\n.ends\n.subckt loopa p\nX1 p loopb\n.ends\n.subckt loopb p\nX1 p loopa\n.ends\nV1 n 0 5\nR0 n 0 1k\nXa n nothere\nXb n two\nXc n loopa\n`,
      {
        findings: [
          { code: 'subckt-not-found', at: 'nothere', message: /`two`, `loopa`, `loopb`/ },
          { code: 'subckt-port-count', at: { in: 'Xb n', text: 'n' }, message: /connects 1 node but subcircuit `two` has 2 ports \(a b\)/ },
          { code: 'subckt-recursive', at: { in: 'X1 p loopa', text: 'loopa' }, message: /loopa → loopb → loopa/ },
        ],
      },
    );
  });

  it('finds a definition nested in another only from inside it, and reads includes inside a body', () => {
    check(
      {
        [ROOT]: `nested defs\n.subckt outer a\n.subckt inner p\nR1 p 0 1k\n.ends inner\nXi a inner\n.include body.inc\n.ends outer\nV1 n 0 5\nXo n outer\nXbad n inner\n`,
        '/w/body.inc': `R2 a 0 2k\n`,
      },
      {
        findings: [{ code: 'subckt-not-found', at: { in: 'Xbad n inner', text: 'inner' }, message: /`outer`/ }],
        elements: { 'Xo.Xi.R1': { nodes: ['n', '0'], value: 1000 }, 'Xo.R2': { nodes: ['n', '0'], value: 2000 } },
      },
    );
  });

  it('reports a port listed twice', () => {
    check(`dup port\n.subckt cell a b A\nR1 a b 1k\n.ends\nV1 n 0 1\nX1 n m 0 cell\nRm m 0 1k\n`, {
      findings: [{ code: 'subckt-port-duplicate', at: { in: 'cell a b A', text: 'A' } }],
      elements: { 'X1.R1': { nodes: ['0', 'm'] } },
    });
  });

  // Source: a subcircuit port stands for the node an instance connects there; a port no element
  // inside names joins that node to nothing (common practice, from memory).
  it('warns once per definition about a port nothing inside connects to, not counting nested definitions or ground', () => {
    check(
      `unused ports\n.subckt buf in out bias VDD 0\n.subckt inner p q\nR1 p bias 1k\n.ends\nR1 IN out 1k\nX1 out vdd inner\n.ends\n` +
        `.subckt spare a b\nR1 a b 1k\n.ends\nV1 n 0 1\nX1 n m k vcc 0 buf\nX2 n m k vcc 0 buf\nRm m 0 1k\n`,
      {
        findings: [
          {
            code: 'subckt-port-unused',
            at: { in: 'buf in out bias', text: 'bias' },
            message: /^Port `bias` of subcircuit `buf` is connected to nothing inside it, so the node an instance attaches there is not joined to any element of the subcircuit\.$/,
          },
          { code: 'subckt-port-unused', at: { in: 'inner p q', text: 'q' }, message: /Port `q` of subcircuit `inner`/ },
        ],
        elements: { 'X1.R1': { nodes: ['n', 'm'] }, 'X2.X1.R1': { nodes: ['m', 'X2.X1.bias'] } },
      },
    );
  });

  it('reports a second definition of the same subcircuit and uses the first', () => {
    check(`dup subckt\n.subckt cell a\nR1 a 0 1k\n.ends\n.subckt CELL a\nR1 a 0 2k\n.ends\nV1 n 0 1\nX1 n cell\n`, {
      findings: [{ code: 'subckt-duplicate', at: 'CELL' }],
      elements: { 'X1.R1': { value: 1000 } },
    });
  });

  it('stops a chain of distinct subcircuits nested deeper than the limit', () => {
    let text = 'deep chain\nV1 n 0 1\nR0 n 0 1k\n';
    for (let k = 0; k < 150; k++) text += `.subckt s${k} a\n${k === 149 ? 'R1 a 0 1k' : `X1 a s${k + 1}`}\n.ends\n`;
    text += 'Xtop n s0\n';
    check(text, {
      findings: [{ code: 'subckt-nesting-too-deep', at: { in: 'X1 a s100\n', text: 's100' }, message: /more than 100 levels deep \(s0 → s1 → s2 → …\)/ }],
      also: (r) => expect(r.circuit.elements.map((e) => e.name)).toEqual(['V1', 'R0']),
    });
  });

  it('stops flattening at the element limit', () => {
    check(`big\n.subckt r10 a\nR1 a 0 1\nR2 a 0 1\nR3 a 0 1\nR4 a 0 1\nR5 a 0 1\n.ends\nV1 n 0 1\nX1 n r10\nX2 n r10\n`, {
      findings: [{ code: 'circuit-too-large', at: 'R3 a 0 1' }],
      also: (r) => expect(r.circuit.elements).toHaveLength(3),
    }, { maxElements: 3 });
  });
});

describe('temperature', () => {
  it('reads .temp and tnom, lets the option override, and rejects temperatures below absolute zero', () => {
    check(`t\n.temp 85 125\n.option tnom=25\nV1 a 0 1\nR1 a 0 1\n`, {
      findings: [],
      also: (r) => {
        expect(r.circuit.temperatureC).toBe(85);
        expect(r.circuit.tnomC).toBe(25);
      },
    });
    check(`t\n.temp 85\nV1 a 0 1\nR1 a 0 1\n`, { findings: [], also: (r) => expect(r.circuit.temperatureC).toBe(-40) }, { temperatureC: -40 });
    check(`t\n.temp -300\nV1 a 0 1\nR1 a 0 1\n`, { findings: [{ code: 'temperature-invalid', at: '-300' }], also: (r) => expect(r.circuit.temperatureC).toBe(27) });
    check(`t\n.temp 50\nV1 a 0 1\nR1 a 0 1\n`, { findings: [{ code: 'temperature-invalid', at: '' }], also: (r) => expect(r.circuit.temperatureC).toBe(50) }, { temperatureC: Number.NaN });
  });
});

describe('the code table', () => {
  it('has a kebab-case code, a severity and a one-sentence summary for every entry', () => {
    for (const [code, { severity, summary }] of Object.entries(NETLIST_CODES)) {
      expect(code).toMatch(/^[a-z]+(-[a-z]+)*$/);
      expect(['error', 'warning', 'info', 'hint']).toContain(severity);
      expect(summary).toMatch(/^[A-Z0-9].*\.$/);
    }
  });
});

describe('MOS models of higher levels, bins and geometry scale', () => {
  // Source: docs/DEVICE-MODELS.md — VTO ← VTH0, KP ← U0·εox/TOX (U0 > 1 in cm²/V·s), GAMMA ← K1, with
  // εox = 3.9·8.854e-12 F/m (the permittivity of SiO2, common practice, from memory).
  it('maps VTH0, U0/TOX and K1 of a higher-level model to level 1, with one note naming them', () => {
    check(`levels\n.model nb nmos (LEVEL=54 VTH0=0.42 U0=420 TOX=4n K1=0.55 LAMBDA=0.06)\nV1 d 0 1\nM1 d d 0 0 nb W=1u L=1u\n`, {
      findings: [{ code: 'model-level-approximated', at: 'LEVEL=54', message: /LEVEL=54.*level-1 approximation.*VTO = 0.42 V from VTH0.*KP = .* from U0 \(cm²\/V·s\) and TOX.*GAMMA = 550 m√V from K1.*LAMBDA as written.*PHI at its level-1 default/ } ],
      also: (r) => {
        const p = r.circuit.models['nb']!.params;
        expect(p['VTO']).toBe(0.42);
        expect(p['KP']! / ((420e-4 * 3.9 * 8.854e-12) / 4e-9)).toBeCloseTo(1, 12);
        expect(p['GAMMA']).toBe(0.55);
        expect(p['LAMBDA']).toBe(0.06);
      },
    });
  });

  it('reads a U0 of 1 or less as m²/V·s and keeps the level-1 values a card gives itself', () => {
    check(`levels\n.model pb pmos (level=49 vth0=-0.5 vto=-0.6 u0=0.015 tox=5n)\nV1 d 0 -1\nM1 d d 0 0 pb W=1u L=1u\n`, {
      findings: [{ code: 'model-level-approximated', at: 'level=49', message: /VTO as written/ }],
      also: (r) => {
        const p = r.circuit.models['pb']!.params;
        expect(p['VTO']).toBe(-0.6);
        expect(p['KP']! / ((0.015 * 3.9 * 8.854e-12) / 5e-9)).toBeCloseTo(1, 12);
      },
    });
  });

  it('takes TOXE for TOX from a BSIM4-style card that gives no TOX', () => {
    // Such cards write the electrical oxide thickness TOXE (and the physical TOXP) instead of TOX (common practice of
    // process kits, from memory); KP = U0·εox/TOXE with U0 = 0.035 m²/V·s: 0.035 · 3.9 · 8.854e-12 / 4.1e-9 ≈ 2.95e-4 A/V².
    check(`bsim4\n.model nb nmos (level=54 version=4.5 vth0=0.42 u0=0.035 toxe=4.1n toxp=3.5n k1=0.55)\nV1 d 0 1\nM1 d d 0 0 nb W=1u L=1u\n`, {
      findings: [
        { code: 'model-level-approximated', at: 'level=54', message: /KP = 295 µA\/V² from U0 \(m²\/V·s\) and TOXE/ },
        { code: 'model-parameter-ignored', at: 'nb', message: /VERSION, TOXP/ },
      ],
      also: (r) => {
        const p = r.circuit.models['nb']!.params;
        expect(p['KP']! / ((0.035 * 3.9 * 8.854e-12) / 4.1e-9)).toBeCloseTo(1, 12);
      },
    });
    // TOX, when given, is the oxide: TOXE beside it changes nothing.
    check(`both\n.model nb nmos (level=54 u0=0.035 tox=5n toxe=4.1n)\nV1 d 0 1\nM1 d d 0 0 nb W=1u L=1u\n`, {
      findings: [{ code: 'model-level-approximated', at: 'level=54', message: /from U0 \(m²\/V·s\) and TOX\b/ }],
      also: (r) => expect(r.circuit.models['nb']!.params['KP']! / ((0.035 * 3.9 * 8.854e-12) / 5e-9)).toBeCloseTo(1, 12),
    });
  });

  it('chooses the bin whose L and W ranges cover the device, and reports a size no bin covers', () => {
    const text =
      `bins\n.model nch.1 nmos (LMIN=0.1u LMAX=1u WMIN=0.1u WMAX=100u VTO=0.4 KP=200u)\n` +
      `.model nch.2 nmos (LMIN=1u LMAX=10u WMIN=0.1u WMAX=100u VTO=0.5 KP=180u)\n` +
      `V1 d 0 1\nM1 d d 0 0 nch W=2u L=0.5u\nM2 d d 0 0 nch W=2u L=1u\nM3 d d 0 0 nch W=2u L=20u\n`;
    check(text, {
      findings: [{ code: 'model-bin-not-found', at: { in: 'M3 d d 0 0 nch', text: 'nch' }, message: /L = 20 µm.*nch\.1: L 100 nm–1 µm.*nch\.2: L 1 µm–10 µm/ }],
      elements: { M1: { model: 'nch.1' }, M2: { model: 'nch.2' }, M3: null },
    });
  });

  it('multiplies W and L by .option scale', () => {
    check(`scale\n.option scale=1u\n.model nn nmos (VTO=0.5)\nV1 d 0 1\nM1 d d 0 0 nn W=4 L=0.5\n`, {
      findings: [],
      elements: { M1: { w: 4e-6, l: 0.5e-6 } },
    });
  });
});

describe('Gummel–Poon and breakdown parameters', () => {
  it('reads IKF, ISE, RB, XTB and BV as used parameters, and 0 as "none" where the trade writes it so', () => {
    check(`gp\n.model q1 npn (IKF=0 IKR=10m ISE=1f NE=1.8 RB=50 RE=1 RC=5 XTB=1.5 VAR=0)\n.model dz d (BV=5.1 IBV=5m NBV=1.2 TBV1=-5e-4)\nV1 a 0 5\nQ1 a a 0 q1\nD1 0 a dz\n`, {
      findings: [],
      also: (r) => {
        const q = r.circuit.models['q1']!.params;
        expect(q['IKF']).toBe(Infinity);
        expect(q['VAR']).toBe(Infinity);
        expect(q['IKR']).toBe(10e-3);
        expect(q['RB']).toBe(50);
        expect(r.circuit.models['dz']!.params['BV']).toBe(5.1);
      },
    });
  });
});

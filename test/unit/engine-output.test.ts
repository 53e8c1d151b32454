// What leaves the engine: ranges inside their documents while a person types at the end of a file,
// finite numbers only (JSON has no NaN or Infinity: JSON.stringify writes null, ECMA-404 / RFC 8259),
// and quick fixes whose text parses as what they claim to add.

import { describe, expect, it } from 'vitest';
import { analyse, analyseSession, attachAllSizingFixes, sizingFixesOf } from '../../shared-analysis/src/service';
import { parse } from '../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace, type Finding } from '../../shared-analysis/src/types';
import { clampSpan, dropNonFinite, keepFinite, registerLazyTable } from '../../shared-analysis/src/output-guard';
import { rng } from '../seeded-random';
import { definesModel } from '../../shared-analysis/src/fixes/model-fixes';
import { findingCatalogue } from '../../shared-analysis/src/codes';
import { parameterStep } from '../../shared-analysis/src/variation/sensitivity';
import { spreadText } from '../../shared-analysis/src/variation/text';
import type { OutputVariation } from '../../shared-analysis/src/variation/types';

const URI = '/w/typing.cir';

function run(text: string) {
  return analyse({ uri: URI, text }, new MemoryWorkspace({}), { corners: { enabled: false } });
}

/** Every range of every finding, related location and fix edit, with what it belongs to. */
function ranges(findings: Finding[]) {
  const out: { what: string; uri: string; start: number; end: number }[] = [];
  for (const f of findings) {
    out.push({ what: f.code, uri: f.uri, ...f.span });
    for (const r of f.related ?? []) out.push({ what: `${f.code} related`, uri: r.uri, ...r.span });
    for (const fix of f.fixes ?? []) for (const e of fix.edits) out.push({ what: `${f.code} fix`, uri: e.uri, ...e.span });
  }
  return out;
}

describe('ranges while typing at the end of a file', () => {
  // Each netlist is typed character by character; after every keystroke the document ends at the cursor.
  const typed = [
    'Divider\nV1 a 0 5\nR1 a b {',
    'Divider\nV1 a 0 5\nR1 a b {2*',
    'Sense resistor\nV1 a 0 1\nR1 a 0 10k ; expect 100uA ±',
    'Sense resistor\nV1 a 0 1\nR1 a 0 10k ; expect 100uA ±5% corners ±',
    'Mirror\n.param r={',
    'Mirror\n* expect Q2 = ',
  ];
  for (const text of typed) {
    it(`keeps every range inside the text at each keystroke of ${JSON.stringify(text.slice(text.lastIndexOf('\n') + 1))}`, () => {
      for (let n = 1; n <= text.length; n++) {
        const prefix = text.slice(0, n);
        const a = run(prefix);
        for (const r of ranges(a.findings)) {
          expect(r.start >= 0 && r.start <= r.end && r.end <= prefix.length, `${r.what} ${r.start}..${r.end} in ${JSON.stringify(prefix)} (${prefix.length} chars)`).toBe(true);
        }
      }
    });
  }

  it('points an empty expression at its brace and a cut-off tolerance at its ± sign', () => {
    const brace = run('Divider\nV1 a 0 5\nR1 a b {');
    const empty = brace.findings.find((f) => f.code === 'element-value-invalid')!;
    expect(empty.span).toEqual({ start: 24, end: 25 }); // the `{`, the last character
    const tol = run('Sense resistor\nV1 a 0 1\nR1 a 0 10k ; expect 100uA ±');
    const t = tol.findings.find((f) => f.code === 'target-unreadable')!;
    expect(t.span.end).toBe(tol.documents[URI]!.text.length);
    expect(tol.documents[URI]!.text.slice(t.span.start, t.span.end)).toBe('±');
  });

  it('clamps a span to its text', () => {
    expect(clampSpan({ start: 10, end: 11 }, 10)).toEqual({ start: 10, end: 10 });
    expect(clampSpan({ start: -3, end: 4 }, 10)).toEqual({ start: 0, end: 4 });
    expect(clampSpan({ start: 12, end: 9 }, 10)).toEqual({ start: 9, end: 9 });
  });
});

describe('finite numbers only', () => {
  it('refuses a target below the 1 pA floor instead of carrying an infinite error', () => {
    // (i − t)/t with t = 1e-320 A (subnormal) overflows to Infinity, which JSON writes as null.
    const a = run('Tiny target\nV1 a 0 5\nR1 a 0 1k ; expect 1e-320A\n');
    expect(a.findings.map((f) => f.code)).toContain('target-unreadable');
    expect(a.findings.some((f) => f.code === 'target-missed')).toBe(false);
    expect(JSON.stringify(a.findings)).not.toContain('null');
    expect(a.findings.find((f) => f.code === 'target-unreadable')!.message).toMatch(/below the 1 pA floor/);
  });

  it('drops non-finite numbers from nested data and says where, in one finding', () => {
    const structures = [{ irefShortcut: NaN, ratio: 2, compliance: { Q2: { low: -Infinity, high: 4.2 } }, steps: [1, Infinity, 3] }];
    const findings: Finding[] = [{ code: 'target-missed', severity: 'warning', message: 'm', uri: URI, span: { start: 0, end: 1 }, data: { error: Infinity, target: 1e-3 } }];
    const f = keepFinite(findings, { structures }, URI)!;
    expect(f.code).toBe('value-not-finite');
    expect(findingCatalogue()[f.code]).toBeDefined();
    expect(f.data).toEqual({ paths: ['target-missed.data.error', 'structures[0].irefShortcut', 'structures[0].compliance.Q2.low', 'structures[0].steps[1]'], count: 4 });
    expect(structures).toEqual([{ ratio: 2, compliance: { Q2: { high: 4.2 } }, steps: [1, 3] }]);
    expect(findings[0]!.data).toEqual({ target: 1e-3 });
    // Afterwards the data survives a JSON round trip unchanged.
    expect(JSON.parse(JSON.stringify(structures))).toEqual(structures);
    expect(keepFinite(findings, { structures }, URI)).toBeUndefined();
  });

  it('leaves a registered table read through its getter unread, and walks the rest of its holder', () => {
    // The engine's lazily built tables (solve/point.ts, structures/corner-columns.ts, variation/index.ts) register
    // their shared accessor with registerLazyTable; the walk must neither build them nor miss a bad number beside them.
    let reads = 0;
    const TABLE: PropertyDescriptor = { enumerable: true, configurable: true, get: () => (reads++, { x: NaN }) };
    registerLazyTable('guardTestTable', TABLE);
    const holder: Record<string, unknown> = { bad: NaN, nested: { worse: -Infinity, fine: [1, 2] } };
    Object.defineProperty(holder, 'guardTestTable', TABLE);
    const removed: string[] = [];
    dropNonFinite([holder], 'root', removed);
    expect(reads).toBe(0);
    expect(removed).toEqual(['root[0].bad', 'root[0].nested.worse']);
    // Another getter under the same name, or the registered getter under another name, is read as any member.
    const other: Record<string, unknown> = {};
    Object.defineProperty(other, 'guardTestTable', { enumerable: true, configurable: true, get: () => (reads++, { x: NaN }) });
    Object.defineProperty(other, 'elsewhere', TABLE);
    const removedOther: string[] = [];
    dropNonFinite({ p: other }, 'p', removedOther);
    expect(reads).toBe(2);
    expect(removedOther).toEqual(['p.p.guardTestTable.x', 'p.p.elsewhere.x']);
  });

  it('walks a registered table once its holder says it is no longer the built one, and one replaced by a value', () => {
    let reads = 0;
    const assigned = new WeakSet<object>();
    const TABLE: PropertyDescriptor = { enumerable: true, configurable: true, get: () => (reads++, { x: NaN }) };
    registerLazyTable('guardTestAssignable', TABLE, (h) => !assigned.has(h));
    const built: Record<string, unknown> = { n: 1 };
    const given: Record<string, unknown> = { n: 2 };
    const replaced: Record<string, unknown> = { n: 3 };
    for (const h of [built, given, replaced]) Object.defineProperty(h, 'guardTestAssignable', TABLE);
    assigned.add(given);
    // Replaced by a plain value (as the tables' setters do): an ordinary member again.
    Object.defineProperty(replaced, 'guardTestAssignable', { value: { y: Infinity }, writable: true, enumerable: true, configurable: true });
    const removed: string[] = [];
    dropNonFinite({ built, given, replaced }, 'h', removed);
    expect(reads).toBe(1);
    expect(removed).toEqual(['h.given.guardTestAssignable.x', 'h.replaced.guardTestAssignable.y']);
  });

  it('refuses to register an accessor without a getter', () => {
    expect(() => registerLazyTable('guardTestNoGetter', { value: 1 })).toThrow(/no getter/);
  });

  it('removes what an independent walk of random nested data removes, and names the same paths', () => {
    // The reference: a plain depth-first walk that remembers every object it enters (the guard
    // remembers nothing until a limit, then what it enters, and reads records another way), deleting
    // members and compacting lists in place as it goes. Paths are written as the guard's doc comment
    // says: root[3].name. Each trial runs the guard with its own limits as well, small ones so that it
    // starts remembering somewhere inside the data.
    const reference = (value: unknown, path: string, removed: string[], seen: Set<object>): void => {
      if (value === null || typeof value !== 'object' || ArrayBuffer.isView(value) || seen.has(value)) return;
      seen.add(value);
      if (Array.isArray(value)) {
        const kept: unknown[] = [];
        value.forEach((v, i) => {
          if (typeof v === 'number' && !Number.isFinite(v)) removed.push(`${path}[${i}]`);
          else {
            reference(v, `${path}[${i}]`, removed, seen);
            kept.push(v);
          }
        });
        value.splice(0, value.length, ...kept);
        return;
      }
      const record = value as Record<string, unknown>;
      for (const key of Object.keys(record)) {
        const v = record[key];
        if (typeof v === 'number' && !Number.isFinite(v)) {
          removed.push(`${path}.${key}`);
          delete record[key];
        } else reference(v, `${path}.${key}`, removed, seen);
      }
    };
    const random = rng(20261203);
    const pick = <T>(xs: readonly T[]): T => xs[Math.floor(random() * xs.length)]!;
    const numbers = [0, -0, 1.5, -2e-300, 1e308, NaN, Infinity, -Infinity];
    // Names include integer-like ones ("7", listed first by an object) and inherited ones.
    const names = ['a', 'b', '7', '0', 'value', 'constructor', '__proto__x', 'x y'];
    for (let trial = 0; trial < 200; trial++) {
      const made: object[] = [];
      const make = (depth: number): unknown => {
        const r = random();
        if (depth > 4 || r < 0.35) return pick(numbers);
        if (r < 0.42) return pick(['s', 'NaN', '']);
        if (r < 0.46 && made.length > 0) return pick(made); // shared, or a cycle back up
        if (r < 0.48) return new Float64Array([NaN, 1]);
        if (r < 0.49) return null;
        const o: unknown = r < 0.7 ? [] : {};
        made.push(o as object);
        const n = Math.floor(random() * 6);
        for (let i = 0; i < n; i++) {
          const v = make(depth + 1);
          if (Array.isArray(o)) o.push(v);
          else (o as Record<string, unknown>)[pick(names)] = v;
        }
        return o;
      };
      const data = { root: make(0) };
      // The reference runs on a structured clone: same shape, sharing and cycles; so does the guard with small limits.
      const copy = structuredClone(data);
      const limited = structuredClone(data);
      const expected: string[] = [];
      reference(copy.root, 'x', expected, new Set());
      const removed: string[] = [];
      dropNonFinite(data.root, 'x', removed);
      expect(removed).toEqual(expected);
      expect(data).toEqual(copy);
      const limits = { members: Math.floor(random() * 30), depth: 1 + Math.floor(random() * 5) };
      const removedLimited: string[] = [];
      dropNonFinite(limited.root, 'x', removedLimited, limits);
      expect(removedLimited, JSON.stringify(limits)).toEqual(expected);
      expect(limited).toEqual(copy);
    }
  });

  it('names each removed value once, at its first path, when an object is shared or part of a cycle', () => {
    // The walk does not remember what it walked: an object reached twice must still be reported once, and a cycle must end.
    const leaf = { bad: NaN, ok: 1 };
    const list = [Infinity, 2];
    const a: Record<string, unknown> = { first: leaf, again: leaf, lists: [list, list] };
    a['self'] = a;
    const b = { back: a, x: -Infinity };
    a['b'] = b;
    const removed: string[] = [];
    dropNonFinite(a, 'root', removed);
    expect(removed).toEqual(['root.first.bad', 'root.lists[0][0]', 'root.b.x']);
    expect(leaf).toEqual({ ok: 1 });
    expect(list).toEqual([2]);
  });

  it('names a value that two parts share once, under the first part', () => {
    // keepFinite walks its parts in one walk: the file's spread outputs are the structures' spreads.
    const shared = { sigma: NaN, supplyPercentPerVolt: { V1: 2 } };
    const own = { nominal: Infinity, supplyPercentPerVolt: { V1: 1 } };
    const findings: Finding[] = [];
    const f = keepFinite(findings, { structures: [{ variation: { iref: shared } }], variation: { outputs: [shared, own] } }, URI)!;
    expect(f.data).toEqual({ paths: ['structures[0].variation.iref.sigma', 'variation.outputs[1].nominal'], count: 2 });
    expect(shared).toEqual({ supplyPercentPerVolt: { V1: 2 } });
    expect(own).toEqual({ supplyPercentPerVolt: { V1: 1 } });
  });

  it('ends on data nested deeper than its limit, through a cycle, with the paths a plain walk gives', () => {
    // A chain 100 objects deep (the walk remembers what it enters once 64 are open) whose last link points back to
    // the first: every link holds a value that is not finite, named once at its place in the chain.
    const chain: Record<string, unknown>[] = [];
    for (let i = 0; i < 100; i++) chain.push({ bad: i % 2 ? NaN : -Infinity, ok: i });
    for (let i = 0; i < 99; i++) chain[i]!['next'] = chain[i + 1];
    chain[99]!['next'] = chain[0];
    chain[50]!['back'] = chain[10];
    const removed: string[] = [];
    dropNonFinite(chain[0], 'c', removed);
    // Independent: the path of link i is `c` followed by i times `.next`.
    expect(removed).toEqual(chain.map((_, i) => `c${'.next'.repeat(i)}.bad`));
    expect(chain.every((link, i) => !('bad' in link) && link['ok'] === i)).toBe(true);
  });

  it('enters each object at most twice past its member limit, on data shared along every path', () => {
    // Forty levels, each object holding the next one twice: 2^40 paths to the last. A plain walk without memory
    // would not end; past its limit the guard remembers what it enters. Objects are counted as the walk lists
    // their names (a proxy's ownKeys trap).
    let listed = 0;
    const count = <T extends object>(o: T): T => new Proxy(o, { ownKeys: (t) => (listed++, Reflect.ownKeys(t)) });
    let level: Record<string, unknown> = count({ last: Infinity });
    for (let i = 0; i < 40; i++) level = count({ left: level, right: level, n: 1 });
    const removed: string[] = [];
    dropNonFinite(level, 'd', removed, { members: 1000, depth: 64 });
    expect(removed).toEqual([`d${'.left'.repeat(40)}.last`]);
    // Each object counts its members and one more (two for the last, four for the others): past 1,000 after at most
    // 501 objects; from then on each of the 41 at most once.
    expect(listed).toBeLessThanOrEqual(501 + 41);
  });

  it('finds a value that is not finite put into each part of a real analysis, with its path', () => {
    // A resistor-fed NPN mirror (invented values): structures, the spread and corners all present.
    const text = 'Mirror\nVCC vcc 0 5\nRR vcc r 10k\nQ1 r r 0 qn\nQ2 o r 0 qn\nRL vcc o 2k\n.model qn NPN (IS=1e-15 BF=100 VAF=60)\n.end\n';
    const fresh = () => analyse({ uri: URI, text }, new MemoryWorkspace({}));
    const parts = (a: ReturnType<typeof fresh>) => ({ operatingPoint: a.operatingPoint, structures: a.structures, variation: a.variation });
    const clean = fresh();
    expect(clean.findings.some((f) => f.code === 'value-not-finite')).toBe(false);
    expect(clean.structures.length).toBeGreaterThan(0);
    expect(clean.variation?.outputs.length).toBeGreaterThan(0);
    expect(keepFinite(clean.findings, parts(clean), URI)).toBeUndefined();
    const injections: [string, (a: ReturnType<typeof fresh>) => void][] = [
      ['operatingPoint.temperatureC', (a) => void ((a.operatingPoint as unknown as Record<string, unknown>)['temperatureC'] = NaN)],
      // A structure's checked tables are made afresh each time they are read (structures/recognised.ts): a producer's
      // value reaches the structure by assignment, as the structure check gives them.
      ['structures[0].headroom.Q2', (a) => void (a.structures[0]!.headroom = { ...a.structures[0]!.headroom, Q2: Infinity })],
      ['structures[0].solved.iref', (a) => void (a.structures[0]!.solved = { ...a.structures[0]!.solved!, iref: -Infinity })],
      ['structures[0].variation.iref.sigma', (a) => void (a.structures[0]!.variation!.iref!.sigma = NaN)],
      ['variation.stats.adjointSolves', (a) => void ((a.variation!.stats as unknown as Record<string, unknown>)['adjointSolves'] = NaN)],
    ];
    for (const [path, inject] of injections) {
      const a = fresh();
      inject(a);
      const f = keepFinite(a.findings, parts(a), URI);
      expect(f?.code, path).toBe('value-not-finite');
      expect(f!.data, path).toEqual({ paths: [path], count: 1 });
    }
  });

  it('leaves typed arrays and finite data alone', () => {
    const removed: string[] = [];
    const data = { a: new Float64Array([NaN]), b: [0, -0, 1e308], c: { d: 'NaN' } };
    dropNonFinite(data, 'x', removed);
    expect(removed).toEqual([]);
    expect(data.b).toEqual([0, -0, 1e308]);
  });
});

describe('quick fixes produce text that parses', () => {
  it('offers no .model card for a name the card cannot carry', () => {
    // `q$$` at the end of the line is read as model `q$` (the last `$` opens a comment); a card
    // `.model q$ d …` would read as `.model q` followed by a comment, defining nothing of that name.
    const a = run('Clamp\nV1 c 0 5\nD1 c 0 q$$\n');
    const f = a.findings.find((x) => x.code === 'model-not-found')!;
    expect(f).toBeDefined();
    for (const fix of f.fixes ?? []) for (const e of fix.edits) expect(e.newText.startsWith('.model q$ ')).toBe(false);
  });

  it('applies every .model fix of an ordinary name to a netlist that then defines the model', () => {
    const text = 'Clamp\nV1 c 0 5\nR1 c a 1k\nD1 a 0 dclamp\nQ1 c a 0 q_2n\n';
    const a = run(text);
    const fixes = a.findings.filter((f) => f.code === 'model-not-found').flatMap((f) => f.fixes ?? []).filter((x) => x.edits.some((e) => e.newText.startsWith('.model')));
    expect(fixes.length).toBeGreaterThanOrEqual(2);
    for (const fix of fixes) {
      const e = fix.edits[0]!;
      const fixed = text.slice(0, e.span.start) + e.newText + text.slice(e.span.end);
      const b = run(fixed);
      const name = /^\.model (\S+)/.exec(e.newText)![1]!;
      expect(b.findings.filter((f) => f.code === 'model-not-found' && f.data?.['modelName'] === name), fix.title).toEqual([]);
      expect(b.findings.filter((f) => f.code.startsWith('syntax') || f.code === 'model-missing-fields'), fix.title).toEqual([]);
    }
  });

  it('checks a card by reading it', () => {
    expect(definesModel('.model q_2n npn (IS=1e-16)', 'q_2n')).toBe(true);
    expect(definesModel('.model q$ npn (IS=1e-16)', 'q$')).toBe(false);
    expect(definesModel('.model q npn (IS=1e-16) ; note', 'q')).toBe(true);
  });
});

describe('cases the fuzz target found', () => {
  it('says a power limit scaled to almost nothing is exceeded without an infinite ratio', () => {
    // M=1e-320 scales the default 0.5 W limit to a subnormal ≈5e-321 W; p/limit overflows to ∞.
    const a = run('PMOS mirror\nVDD vdd 0 3.3\nMP1 gp gp vdd vdd pch W=8u L=1u\nMP2 op gp vdd vdd pch W=8u L=1u M=1e-320\nRGP gp 0 100k\nROP op 0 30k\n.model pch PMOS (VTO=-0.5 KP=40u LAMBDA=0.05)\n.end\n');
    const power = a.findings.filter((f) => f.code === 'power-over-rating' && f.data?.['device'] !== 'MP1');
    expect(power.length).toBeGreaterThan(0);
    for (const f of power) expect(f.message).not.toMatch(/Infinity|NaN/);
    expect(a.findings.some((f) => f.code === 'value-not-finite')).toBe(false);
  });

  it('reads a behavioural source\'s V(node) from that node when an element left out took its node with it', () => {
    // Fuzz case 20199 of seed 20261202 (`V(undefined)` in a message): Q1 has no model and is left out, so
    // its node x is dropped and the nodes after it renumbered; B1's V(a) kept the old number and read
    // V(out) instead. Ohm's law on the divider: V(a) = 2 V × 1k / (1k + 1k) = 1 V, so V(out) = 2 × V(a) = 2 V.
    const a = run('Level probe: a doubler reading a divider, beside a transistor with no model\nV1 in 0 2\nQ1 x x 0 nomodel\nR1 in a 1k\nR2 a 0 1k\nB1 out 0 V={2*V(a)}\nR3 out 0 1k\n.end\n');
    expect(a.findings.map((f) => f.code)).toContain('model-not-found');
    expect(a.operatingPoint!.nodes['a']).toBeCloseTo(1, 6);
    expect(a.operatingPoint!.nodes['out']).toBeCloseTo(2, 6);
    // A function that cannot be evaluated names the node it reads.
    const b = run('Log probe\nV1 in 0 -2\nQ1 x x 0 nomodel\nR1 in a 1k\nR2 a 0 1k\nB1 out 0 V={log(V(a))}\nR3 out 0 1k\n.end\n');
    const f = b.findings.find((x) => x.code === 'dc-behaviour-not-evaluable');
    expect(f?.message).toMatch(/V\(a\) = -1\b/);
  });

  it('says a temperature coefficient that overflows at an extreme temperature makes the resistance too large, without Infinity', () => {
    // Fuzz case 44995 of seed 20261202: at 1e300 °C, 1 + TC1·ΔT + TC2·ΔT² overflows to +∞ (IEEE 754 double range ≈ 1.8e308).
    const a = run('Heater sense\n.temp 1e300\nV1 a 0 1\nR1 a 0 1k TC1=1.5m TC2=2u\n.end\n');
    const f = a.findings.find((x) => x.code === 'dc-value-unusable' && x.message.includes('R1'));
    expect(f?.message).toMatch(/make its resistance too large for a number; its value at the nominal temperature was used/);
    for (const x of a.findings) expect(x.message).not.toMatch(/Infinity|NaN/);
  });

  it('shows a spread figure the output guard left out as a dash, not NaN', () => {
    // Fuzz cases 24792 … 46977 of seed 20261202 (a PNP with BF=1e-320 in an included file): the spread's σ,
    // worst case and drift were NaN, the guard removed them (value-not-finite), and the text report printed
    // "drift +NaN ppm/°C". The root, the NaN in the spread analysis, is reported to its owner.
    const left = { sigmaRelative: undefined, worstCaseRelative: undefined, tempcoPpmPerC: undefined, supplyPercentPerVolt: { VEE: Infinity, VCC: 2 }, contributors: [] } as unknown as OutputVariation;
    const text = spreadText(left);
    expect(text).not.toMatch(/NaN|Infinity|undefined/);
    expect(text).toContain('drift —');
    expect(text).toContain('VCC +2 %/V');
  });

  it('replaces a $ glued before a sized value with the value, so the blank kept before it opens no comment', () => {
    // Fuzz case 132209 of seed 20261202: `RREF vcc ref ${rref}` became `RREF vcc ref $ 43k`, and `$ ` starts a comment.
    const text = 'Reference\n.param rref=23k\nVCC vcc 0 15\nRREF vcc ref ${rref}\nQ1 ref ref 0 qn\nQ2 out ref 0 qn ; expect 1mA ±1%\nRL vcc out 1k\n.model qn NPN (BF=100)\n.end\n';
    const s = analyseSession({ uri: URI, text }, new MemoryWorkspace({}), { corners: { enabled: false } });
    const missed = s.analysis.findings.find((f) => f.code === 'target-missed');
    expect(missed).toBeDefined();
    const fixes = sizingFixesOf(s, missed!).filter((f) => f.edits.length > 0);
    expect(fixes.length).toBeGreaterThan(0);
    for (const fix of fixes) {
      let fixed = text;
      for (const e of [...fix.edits].sort((x, y) => y.span.start - x.span.start)) fixed = fixed.slice(0, e.span.start) + e.newText + fixed.slice(e.span.end);
      expect(parse(URI, fixed, { hasTitle: true }).errors, fixed).toEqual([]);
      expect(fixed).not.toContain('$ ');
    }
  });

  it('keeps a blank on each side of a sized value written against its neighbours', () => {
    // `ref{rset}M=1` is a node, a value and a parameter; writing 24k in place of {rset} must not make `ref24kM=1` one field.
    const text = 'Reference\n.param rset=23k\nVCC vcc 0 15\nRSET vcc ref{rset}M=1\nQ1 ref ref 0 qn\nQ2 out ref 0 qn ; expect 1mA ±1%\nRL vcc out 1k\n.model qn NPN (BF=100)\n.end\n';
    const s = analyseSession({ uri: URI, text }, new MemoryWorkspace({}), { corners: { enabled: false } });
    const missed = s.analysis.findings.find((f) => f.code === 'target-missed');
    expect(missed).toBeDefined();
    const fixes = sizingFixesOf(s, missed!).filter((f) => f.edits.length > 0);
    expect(fixes.length).toBeGreaterThan(0);
    for (const fix of fixes) {
      for (const e of fix.edits) {
        const fixed = text.slice(0, e.span.start) + e.newText + text.slice(e.span.end);
        expect(parse(URI, fixed, { hasTitle: true }).errors, fixed).toEqual([]);
      }
    }
  });
});

describe('the command line sizing budget', () => {
  const text = 'Two mirrors\nVCC vcc 0 12\nR1 vcc r1 10k\nQ1 r1 r1 0 qn\nQ2 o1 r1 0 qn ; expect 2mA ±1%\nRL1 vcc o1 1k\nR2 vcc r2 22k\nQ3 r2 r2 0 qn\nQ4 o2 r2 0 qn ; expect 1mA ±1%\nRL2 vcc o2 1k\n.model qn NPN (BF=100)\n.end\n';
  const sized = (f: Finding) => (f.fixes ?? []).some((x) => x.edits.some((e) => /^\d/.test(e.newText)));

  it('sizes every missed target when the budget is not spent', () => {
    const s = analyseSession({ uri: URI, text }, new MemoryWorkspace({}), { corners: { enabled: false } });
    const missed = s.analysis.findings.filter((f) => f.code === 'target-missed');
    expect(missed.length).toBe(2);
    expect(attachAllSizingFixes(s, () => false)).toBe(0);
    expect(missed.every(sized)).toBe(true);
  });

  it('stops sizing once the budget is spent and counts the targets left', () => {
    const s = analyseSession({ uri: URI, text }, new MemoryWorkspace({}), { corners: { enabled: false } });
    let asked = 0;
    // The budget runs out after the first target.
    expect(attachAllSizingFixes(s, () => asked++ >= 1)).toBe(1);
    const missed = s.analysis.findings.filter((f) => f.code === 'target-missed');
    expect(missed.filter(sized).length).toBe(1);
    expect(findingCatalogue()['sizing-budget-spent']?.group).toBe('host');
  });
});

describe('a misspelt .end', () => {
  const fixesOf = (text: string) => run(text).findings.filter((f) => f.code === 'dot-card-unknown').flatMap((f) => f.fixes ?? []);
  it('is corrected to .end where no card follows', () => {
    expect(fixesOf('Divider\nV1 a 0 1\nR1 a 0 1k\n.en\n').map((f) => f.edits[0]!.newText)).toEqual(['.end']);
  });
  it('is not corrected to .end above other cards, which .end would stop reading', () => {
    // Found by the fuzz target: `.en` inside a library section became `.end`, and every later card was left unread.
    expect(fixesOf('Divider\nV1 a 0 1\n.en\nR1 a 0 1k\n').map((f) => f.edits[0]!.newText)).not.toContain('.end');
  });
  it('is not corrected to .alter above other cards, which .alter would turn into alternatives', () => {
    // Found by the fuzz target (seed 20261202, case 377887): `.alterRI` inside a subcircuit became `.alter`, and the
    // subcircuit's `.ends` cards after it were no longer read.
    const text = 'Cell\nV1 a 0 1\n.subckt inner p q\n.alterRI p q 1meg\n.ends inner\nX1 a 0 inner\n.end\n';
    expect(fixesOf(text).map((f) => f.edits[0]!.newText)).not.toContain('.alter');
  });
});

describe('the spread analysis of a subnormal threshold', () => {
  // Found by the fuzz target (seed 20261202, case 5339): VTO=1e-320 made every σ of the spread NaN. The cause was the
  // relative step of the threshold's central difference, 1e-320 × 1e-6, which underflows to 0 (0/0 = NaN); the output
  // guard then dropped the figures. A threshold of 1e-320 V is 0 V for every purpose, so its figures must be those of
  // VTO=0 (an independent run of the same circuit), all finite, and nothing is dropped.
  const mirror = (vto: string) =>
    analyse(
      { uri: URI, text: `NMOS mirror\nVDD vdd 0 3.3\nIREF vdd gn 20u\nM1 gn gn 0 0 nch W=4u L=1u\nM2 dn gn 0 0 nch W=8u L=1u ; expect 40uA ±10%\nRDN vdd dn 15k\n.model nch NMOS (VTO=${vto} KP=120u LAMBDA=0.04)\n.end\n` },
      new MemoryWorkspace({}),
    );
  it('gives the figures of a zero threshold, finite, with nothing left out', () => {
    const tiny = mirror('1e-320');
    const zero = mirror('0');
    expect(tiny.findings.filter((f) => f.code === 'value-not-finite')).toEqual([]);
    const outputs = tiny.variation!.outputs;
    // IREF is fed by an ideal current source (no spread); the mirror's output spreads with both devices' mismatch.
    expect(outputs.filter((o) => o.sigma > 0).length).toBeGreaterThan(0);
    outputs.forEach((o, k) => {
      const z = zero.variation!.outputs[k]!;
      expect(o.output).toBe(z.output);
      expect(Number.isFinite(o.sigma)).toBe(true);
      expect(o.sigma).toBeCloseTo(z.sigma, 12);
      expect(o.worstCase).toBeCloseTo(z.worstCase, 12);
      const vth = o.sensitivities.filter((s) => s.parameter.endsWith('VTH'));
      expect(vth.length).toBeGreaterThan(0);
      for (const s of vth) expect(s.value).toBeCloseTo(z.sensitivities.find((t) => t.parameter === s.parameter)!.value, 9);
      expect(o.sensitivities.every((s) => Number.isFinite(s.value))).toBe(true);
    });
  });
  it('keeps a subnormal β finite through the closed-form BJT derivatives', () => {
    // Fuzz cases 24792 … 46977 of seed 20261202: a PNP with BF=1e-320 made the spread's σ and drift NaN. The BJT's
    // derivatives divided by BF (1/BF and IBE1/BF² overflow to Infinity); they are now taken per unit of ln BF, and a
    // source whose σ is not a normal number (here 1e-320 × 1 % / √2) is left out of the spread.
    const a = analyse({ uri: URI, text: 'PNP mirror\nVCC vcc 0 10\nQ1 ref ref vcc qp\nQ2 out ref vcc qp\nRREF ref 0 9.1k\nRL out 0 2k\n.model qp PNP (BF=1e-320)\n.end\n' }, new MemoryWorkspace({}));
    expect(a.findings.filter((f) => f.code === 'value-not-finite')).toEqual([]);
    expect(a.variation!.outputs.length).toBeGreaterThan(0);
    const numbers: number[] = [];
    JSON.stringify(a.variation, (_k, v: unknown) => {
      if (typeof v === 'number') numbers.push(v);
      return v;
    });
    expect(numbers.every(Number.isFinite)).toBe(true);
    expect(a.variation!.sources.some((s) => s.name.endsWith(' β'))).toBe(false);
  });
  it('differences a model parameter with a step that is a normal number', () => {
    const el = mirror('1e-320').circuit!.elements.find((e) => e.name === 'M1')!;
    // 1e-320 × 1e-6 is below the smallest normal double (2^−1022 ≈ 2.2e-308, IEEE 754 binary64).
    expect(1e-320 * 1e-6).toBe(0);
    const h = parameterStep(el, 'VTO');
    expect(h).toBeGreaterThan(2.2250738585072014e-308);
    expect(1e-320 + h).not.toBe(1e-320 - h);
    // A usual value keeps its relative step (10⁻⁶ of it).
    expect(parameterStep(el, 'KP')).toBeCloseTo(120e-6 * 1e-6, 20);
  });
});

describe('a MOSFET whose default size meets an extreme one', () => {
  // Found by the fuzz target (seed 20261202, cases 267168 and 287593): L=1e-320 with W left out made the
  // geometry message read "W/L = Infinity" (10 µm / 1e-320 m overflows: the largest double is about 1.8e308).
  it('says the ratio is too large for a number instead of printing Infinity', () => {
    const a = run(`tiny length
VDD d 0 1
M1 d d 0 0 nch L=1e-320
.model nch NMOS (VTO=0.45 KP=120u)
.end
`);
    const f = a.findings.find((x) => x.code === 'mosfet-geometry-missing')!;
    expect(f.message).not.toMatch(/Infinity|NaN|∞/);
    expect(f.message).toMatch(/W\/L = 10 µm \/ .* m, a ratio too large for a number/);
    // The out-of-range length has its own finding on the value.
    expect(a.findings.some((x) => x.code === 'value-out-of-range')).toBe(true);
    // A usual case keeps its plain ratio.
    const b = run('usual\nVDD d 0 1\nM1 d d 0 0 nch L=2u\n.model nch NMOS (VTO=0.45 KP=120u)\n.end\n');
    expect(b.findings.find((x) => x.code === 'mosfet-geometry-missing')!.message).toContain('(W/L = 5)');
  });
});

// The spread analysis of many outputs at once against the plain computation written out here: each
// output's derivatives from a transposed solve of its own, then σ = √Σ(S·σᵢ)², worst case Σ|S·Δᵢ|,
// contributors summed per group and ranked by their share of the variance, drift, %/V and the
// largest normalised sensitivities, term by term as docs/VARIATION.md defines them.

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../shared-analysis/src/circuit';
import { analyseSession } from '../../shared-analysis/src/service';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import { recogniseStructures } from '../../shared-analysis/src/structures/recognise';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { analyseVariation, leadingContributors, sourceSummaries, type VariationDetail } from '../../shared-analysis/src/variation/index';
import { sensitivities, type VariedParameter } from '../../shared-analysis/src/variation/sensitivity';
import type { Contribution, OutputVariation, Sensitivity, SourceSummary } from '../../shared-analysis/src/variation/types';
import type { Linearisation } from '../../shared-analysis/src/solve/dc';
import { fixture } from '../unit/structures/fixtures';
import { multiplier, selfBiasedLoop } from '../unit/structures/kinds/circuits';

/** |v| to six significant digits: the order of ranked figures (docs/VARIATION.md), here through its decimal text. */
const rank = (v: number): number => Number(Math.abs(v).toPrecision(6));

/** Everything one output's plain computation gives. */
interface PlainOutput {
  nominal: number;
  sigma: number;
  worstCase: number;
  tempcoPpmPerC: number;
  supplyPercentPerVolt: Record<string, number>;
  contributors: Contribution[];
  sensitivities: Sensitivity[];
}

/** The parameters in the order the analysis lists them: each source's, the temperature, then every voltage source and resistor not yet listed. */
function parameterList(circuit: Circuit, detail: VariationDetail): VariedParameter[] {
  const list: VariedParameter[] = [];
  const same = (a: VariedParameter, b: VariedParameter): boolean => JSON.stringify(a) === JSON.stringify(b);
  const add = (p: VariedParameter): void => {
    if (!list.some((q) => same(p, q))) list.push(p);
  };
  for (const s of detail.sources) add(s.parameter);
  add({ kind: 'temperature' });
  circuit.elements.forEach((el, i) => {
    if (el.kind === 'V' && Number.isFinite(el.dc) && el.dc !== 0) add({ kind: 'source', element: i });
    if (el.kind === 'R' && Number.isFinite(el.resistance) && el.resistance > 0) add({ kind: 'resistance', element: i });
  });
  return list;
}

/** One output, computed alone: its own transposed solve, then every figure summed term by term. */
function plainOutput(circuit: Circuit, detail: VariationDetail, lin: Linearisation, o: number): PlainOutput {
  const params = parameterList(circuit, detail);
  const alone = sensitivities(lin, [detail.specs[o].functional], params);
  const y = alone.value[0];
  const scale = Math.abs(y) > 0 ? Math.abs(y) : 1;
  // The output's non-zero derivatives by parameter.
  const d = new Map<number, number>();
  for (let q = alone.rowStart[0]; q < alone.rowStart[1]; q++) d.set(alone.index[q], alone.derivative[q]);
  const paramOf = (p: VariedParameter): number => params.findIndex((q) => JSON.stringify(q) === JSON.stringify(p));
  // σ and worst case: root sum of squares and linear sum over the independent sources.
  let variance = 0;
  let worstCase = 0;
  const groups = new Map<string, { v: number; w: number; aspect?: string; members: { element: string; a: number }[] }>();
  for (const s of detail.sources) {
    const slope = d.get(paramOf(s.parameter));
    if (slope === undefined) continue;
    const a = Math.abs(slope * s.sigma);
    const w = Math.abs(slope * s.bound);
    variance += a * a;
    worstCase += w;
    const g = groups.get(s.group) ?? { v: 0, w: 0, aspect: s.aspect, members: [] };
    g.v += a * a;
    g.w += w;
    g.members.push({ element: s.element, a });
    groups.set(s.group, g);
  }
  // Contributors: per group, a mismatch group named by its devices that carry at least 1 % of its variance.
  const contributors: (Contribution & { r: number })[] = [];
  for (const [group, g] of groups) {
    if (!(g.v > 0)) continue;
    const name = g.aspect ? `${g.members.filter((m) => m.a * m.a >= 0.01 * g.v).map((m) => m.element).join('/')} ${g.aspect}` : group;
    const share = variance > 0 ? g.v / variance : 0;
    contributors.push({ name, share, sigma: Math.sqrt(g.v), worstCase: g.w, r: rank(share) });
  }
  contributors.sort((a, b) => b.r - a.r || (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
  // Normalised sensitivities: resistors % per %, supplies %/V, VBE and VTO shifts %/mV, gain parameters % per %.
  const shown: { j: number; name: string; unit: string; factor: number }[] = [];
  circuit.elements.forEach((el, i) => {
    if (el.kind === 'R' && Number.isFinite(el.resistance) && el.resistance > 0) shown.push({ j: paramOf({ kind: 'resistance', element: i }), name: el.name, unit: '%/%', factor: el.resistance });
    if (el.kind === 'V' && Number.isFinite(el.dc) && el.dc !== 0) shown.push({ j: paramOf({ kind: 'source', element: i }), name: el.name, unit: '%/V', factor: 100 });
  });
  for (const s of detail.sources) {
    if (s.parameter.kind !== 'model') continue;
    const factor = s.aspect === 'VBE' ? (-s.sigma / s.figure) * 1e-3 * 100 : s.parameter.param === 'VTO' ? 1e-3 * 100 : s.nominal;
    shown.push({ j: paramOf(s.parameter), name: s.label, unit: s.aspect === 'VBE' || s.parameter.param === 'VTO' ? '%/mV' : '%/%', factor });
  }
  const listed = shown
    .filter((s) => d.has(s.j))
    .map((s) => ({ parameter: s.name, unit: s.unit, value: (d.get(s.j)! * s.factor) / scale, j: s.j }))
    // Largest first; equal figures in parameter order.
    .sort((a, b) => rank(b.value) - rank(a.value) || a.j - b.j)
    .slice(0, 10);
  const supplyPercentPerVolt: Record<string, number> = {};
  circuit.elements.forEach((el, i) => {
    if (el.kind === 'V' && Number.isFinite(el.dc) && el.dc !== 0) supplyPercentPerVolt[el.name] = ((d.get(paramOf({ kind: 'source', element: i })) ?? 0) / scale) * 100;
  });
  return {
    nominal: y,
    sigma: Math.sqrt(variance),
    worstCase,
    tempcoPpmPerC: ((d.get(paramOf({ kind: 'temperature' })) ?? 0) / scale) * 1e6,
    supplyPercentPerVolt,
    contributors: contributors.slice(0, 8).map(({ name, share, sigma, worstCase: w }) => ({ name, share, sigma, worstCase: w })),
    sensitivities: listed.map(({ parameter, unit, value }) => ({ parameter, unit, value })),
  };
}

/** Relative agreement to 1e-12 (the plain path sums the same terms, in the same order or another). */
function close(actual: number, expected: number, what: string): void {
  expect(Math.abs(actual - expected), `${what}: ${actual} against ${expected}`).toBeLessThanOrEqual(1e-12 * Math.max(Math.abs(expected), 1e-300));
}

/** Each source as the report lists it (docs/VARIATION.md): its label, what it varies, its figure and where the figure came from. */
function plainSummary(s: VariationDetail['sources'][number]): SourceSummary {
  const kind = s.parameter.kind === 'resistance' ? 'resistor' : s.parameter.kind === 'source' ? 'source' : s.partSpread ? 'part spread' : 'mismatch';
  return { name: s.label, kind, figure: s.figure, from: s.from };
}

/** The result's source list as a writer reads it before the list is made, then the list itself: each the plain summary of its source. */
function checkSources(detail: VariationDetail): void {
  const plain = detail.sources.map(plainSummary);
  const written = sourceSummaries(detail.result);
  expect(Array.from({ length: written.length }, (_, k) => written.at(k))).toEqual(plain);
  expect(detail.result.sources).toEqual(plain);
  const after = sourceSummaries(detail.result);
  expect(Array.from({ length: after.length }, (_, k) => after.at(k))).toEqual(plain);
}

/** Every output of a result against its plain computation; the sensitivities read from the output and from its JSON alike. */
function checkAgainstPlain(circuit: Circuit, detail: VariationDetail, lin: Linearisation): number {
  checkSources(detail);
  const outputs = detail.result.outputs;
  outputs.forEach((out: OutputVariation, o) => {
    const plain = plainOutput(circuit, detail, lin, o);
    const what = out.key;
    close(out.nominal, plain.nominal, `${what} nominal`);
    close(out.sigma, plain.sigma, `${what} σ`);
    close(out.worstCase, plain.worstCase, `${what} worst case`);
    close(out.tempcoPpmPerC, plain.tempcoPpmPerC, `${what} drift`);
    expect(Object.keys(out.supplyPercentPerVolt)).toEqual(Object.keys(plain.supplyPercentPerVolt));
    for (const k of Object.keys(plain.supplyPercentPerVolt)) close(out.supplyPercentPerVolt[k], plain.supplyPercentPerVolt[k], `${what} ${k} %/V`);
    // The three the JSON writes, read from the kept columns before the list is made, then the list itself.
    const leading = leadingContributors(out, 3);
    expect(leading.map((c) => c.name), `${what} leading contributors`).toEqual(plain.contributors.slice(0, 3).map((c) => c.name));
    const sameContributors = (list: Contribution[]): void =>
      list.forEach((c, k) => {
        close(c.share, plain.contributors[k].share, `${what} ${c.name} share`);
        close(c.sigma, plain.contributors[k].sigma, `${what} ${c.name} σ`);
        close(c.worstCase, plain.contributors[k].worstCase, `${what} ${c.name} worst case`);
      });
    sameContributors(leading);
    expect(out.contributors.map((c) => c.name), `${what} contributors`).toEqual(plain.contributors.map((c) => c.name));
    sameContributors(out.contributors);
    expect(leadingContributors(out, 3)).toEqual(out.contributors.slice(0, 3));
    // Written out (as the JSON with every breakdown and a structured copy read them) and read directly: the same list.
    const written = JSON.parse(JSON.stringify(out)) as OutputVariation;
    expect(written.sensitivities).toEqual(out.sensitivities);
    expect(out.sensitivities.map((s) => `${s.parameter} ${s.unit}`), `${what} sensitivities`).toEqual(plain.sensitivities.map((s) => `${s.parameter} ${s.unit}`));
    out.sensitivities.forEach((s, k) => close(s.value, plain.sensitivities[k].value, `${what} ${s.parameter}`));
  });
  return outputs.length;
}

/** A netlist analysed as a host does (its spread in the first pass: a small circuit). */
function fromText(text: string): { circuit: Circuit; detail: VariationDetail; lin: Linearisation } {
  const s = analyseSession({ uri: 'mem://spread.cir', text }, new MemoryWorkspace({}), { corners: { enabled: false } });
  return { circuit: s.analysis.circuit!, detail: s.variation!, lin: s.solver!.linearise(s.nominal!)! };
}

/** A built circuit: its structures recognised, solved, and the spread at a 1 % resistor and 5 % supply tolerance. */
function fromCircuit(circuit: Circuit): { circuit: Circuit; detail: VariationDetail; lin: Linearisation } {
  const structures = recogniseStructures(circuit);
  const solver = new DcSolver(circuit);
  const nominal = solver.solve();
  const detail = analyseVariation({
    circuit,
    structures,
    documents: {},
    solver,
    nominal,
    targets: [],
    settings: { resistorTolerance: 0.01, resistorFrom: 'setting', supplyTolerance: 0.05 },
    defaultTargetTolerance: 0.05,
  })!;
  return { circuit, detail, lin: solver.linearise(nominal)! };
}

/** An array of NPN sinks (invented values), with tolerance notes, targets on an output and a load, and a three-output mirror. */
function sinkArray(): string {
  const lines = ['sink array with notes and targets', 'VCC vcc 0 DC 5 ; tol 2%', 'VAUX aux 0 DC 3', '.model qn npn (IS=1e-15 BF=120 VAF=80)', '.model qw npn (IS=2e-15 BF=90 VAF=50 MATCHVBE=1m)'];
  for (let i = 0; i < 6; i++) {
    lines.push(`RR${i} vcc r${i} ${10 + i}k${i === 2 ? ' ; tol 0.1%' : ''}`, `QR${i} r${i} r${i} 0 qn`, `QO${i} o${i} r${i} 0 qn${i === 4 ? ' ; expect 430uA ±3%' : ''}`, `RL${i} vcc o${i} ${1 + (i % 3)}k${i === 5 ? ' ; expect 380uA' : ''}`);
  }
  // Three outputs of unequal size on one reference, the supply through another source.
  lines.push('RW aux w 4.7k', 'QW w w 0 qw', 'QA a w 0 qw 2', 'QB b w 0 qw', 'QC c w 0 qw 4', 'RA vcc a 1k', 'RB vcc b 2.2k', 'RC vcc c 470');
  lines.push('.end', '');
  return lines.join('\n');
}

describe('the spread of many outputs against each output computed on its own', () => {
  it('an array of sinks with card tolerances, targets and a multi-output mirror', () => {
    const { circuit, detail, lin } = fromText(sinkArray());
    // Every output: 7 structures' IREF and outputs, and the target on a load resistor.
    expect(detail.result.outputs.some((o) => o.key === 'element RL5' && o.target)).toBe(true);
    expect(detail.result.outputs.some((o) => o.element === 'QO4' && o.target)).toBe(true);
    expect(checkAgainstPlain(circuit, detail, lin)).toBeGreaterThan(15);
  });

  it('structures of other kinds: MOS mirrors, a Wilson mirror, a bandgap core, a VBE multiplier', () => {
    let outputs = 0;
    for (const circuit of [
      fixture('simple-mirror', 'pmos', { model: { LAMBDA: 0.02 } }).circuit,
      fixture('wilson-mirror', 'npn', { model: { VAF: 60 } }).circuit,
      fixture('cascode-mirror', 'nmos', { model: { LAMBDA: 0.02 } }).circuit,
      selfBiasedLoop({ core: 'npn', startup: 2e6, bandgap: { r2: 10e3 } }).circuit,
      multiplier('npn'),
    ]) {
      const { detail, lin } = fromCircuit(circuit);
      outputs += checkAgainstPlain(circuit, detail, lin);
    }
    expect(outputs).toBeGreaterThan(8);
  });
});

// Comparison of two analyses of the same text reached by different paths (warm or incremental against cold).

import { expect } from 'vitest';
import { addCorners, analyseSession, type AnalysisSession } from '../../../shared-analysis/src/service';
import type { AnalysisOptions } from '../../../shared-analysis/src/analysis';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import type { CornerStats } from '../../../shared-analysis/src/checks/corners';

/** A cold analysis of `text` as the only file of a workspace at `uri`. */
export function coldSession(uri: string, text: string, options: AnalysisOptions): AnalysisSession {
  return analyseSession({ uri, text }, new MemoryWorkspace({ [uri]: text }), options);
}

/** An analysis of `text` that keeps its incremental state and starts from `previous`'s, as the language server's worker runs one after an edit. */
export function editedSession(uri: string, text: string, options: AnalysisOptions, previous?: AnalysisSession, shouldStop?: () => boolean): AnalysisSession {
  const control = { keepIncremental: true, previous: previous?.incremental, warmStart: previous?.warmStart, shouldStop };
  return analyseSession({ uri, text }, new MemoryWorkspace({ [uri]: text }), options, control);
}

/**
 * Equal up to rounding: numbers within `rel` relative, everything else (every message, code and
 * span) exactly. Two converged Newton runs from different starts agree to about 1e-15 relative;
 * quantities the engine derives by finite differences from the solution (spread contributions)
 * carry that difference divided by their step, so they are compared at 1e-6.
 * `path` names the place of a difference in the failure message.
 */
export function expectSame(a: unknown, b: unknown, path = 'analysis', rel = 1e-12): void {
  if (typeof a === 'number' && typeof b === 'number') {
    if (Number.isNaN(a) && Number.isNaN(b)) return;
    // A share of the variance is a fraction of 1: there an absolute 1e-9 is the measure (a contributor of a
    // millionth carries the rounding of the large ones). A relative error (`currentError`) is a fraction of 1
    // too, made of a difference: two points that agree to 1e-15 give it an absolute difference of that order.
    // The spread analysis derives its figures from differences at the solution, so its small figures (a
    // contributor of a millionth, a weak sensitivity) carry the rounding of the large ones: 1e-4 relative
    // there, and 1e-3 for the σ and worst case of a contributor (its share's square root times the output's);
    // they are shown to three digits.
    const small = /\.contributors\.\d+\.(sigma|worstCase)$/.test(path);
    const spread = path.includes('.variation.');
    const tol = (small ? 1e-3 : spread ? Math.max(rel, 1e-4) : rel) * Math.max(Math.abs(a), Math.abs(b)) + (path.endsWith('.share') ? 1e-9 : /Error$/.test(path) ? 1e-12 : 1e-18);
    if (!(Math.abs(a - b) <= tol || a === b)) expect.fail(`${path}: ${a} vs ${b}`);
    return;
  }
  if (a && b && typeof a === 'object' && typeof b === 'object') {
    // A token that is its own span (the parser's) stands for its offsets, as a plain span does (test/span-equality.ts).
    if (isSelfSpan(a) || isSelfSpan(b)) {
      expect(offsets(a), path).toEqual(offsets(b));
      return;
    }
    if (ArrayBuffer.isView(a) && ArrayBuffer.isView(b)) {
      const x = a as unknown as ArrayLike<number>;
      const y = b as unknown as ArrayLike<number>;
      expect(x.length, path).toBe(y.length);
      for (let i = 0; i < x.length; i++) expectSame(x[i], y[i], `${path}[${i}]`, rel);
      return;
    }
    const ka = Object.keys(a).sort();
    expect(ka, path).toEqual(Object.keys(b).sort());
    for (const k of ka) expectSame((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${path}.${k}`, rel);
    return;
  }
  expect(a, path).toEqual(b);
}

function isSelfSpan(v: object): boolean {
  return (v as { span?: unknown }).span === v;
}

/** A span's offsets; any other object as it is. */
function offsets(v: object): unknown {
  const s = v as { start?: unknown; end?: unknown };
  return isSelfSpan(v) || (Object.keys(v).length === 2 && typeof s.start === 'number') ? { start: s.start, end: s.end } : v;
}

/**
 * What a user sees of an analysis, warm against cold: the solved point at 1e-12 (the device records at
 * `deviceRel`: a quantity derived from a difference of node voltages, such as a saturated transistor's
 * IC/IB, carries their rounding magnified), findings and structures (corners included) at 1e-6.
 */
export function expectSameAnalysis(warm: AnalysisSession, cold: AnalysisSession, deviceRel = 1e-12): void {
  const point = (s: AnalysisSession) => ({ nodes: s.analysis.operatingPoint!.nodes, converged: s.analysis.operatingPoint!.converged });
  expectSame(point(warm), point(cold), 'operatingPoint', 1e-12);
  expectSame(warm.analysis.operatingPoint!.devices, cold.analysis.operatingPoint!.devices, 'operatingPoint.devices', deviceRel);
  const rest = (s: AnalysisSession) => ({ findings: s.analysis.findings, structures: s.analysis.structures.map((st) => ({ ...st, corners: st.corners })) });
  expectSame(rest(warm), rest(cold), 'analysis', 1e-6);
  // The text of every finding exactly.
  expect(warm.analysis.findings.map((f) => f.message)).toEqual(cold.analysis.findings.map((f) => f.message));
}

/** The corner phase on both: its findings exactly, the structures' corner figures and spread as `expectSame` compares them. */
export function expectSameCorners(got: AnalysisSession, want: AnalysisSession, stats?: { got: CornerStats; want: CornerStats }): void {
  // The incremental session's corner phase as the server runs it: from the last corner phase's solutions and figures, when its state has them.
  const a = addCorners(got.analysis, { solver: got.solver!, nominal: got.nominal!, incremental: got.incremental, stats: stats?.got });
  const b = addCorners(want.analysis, { solver: want.solver!, nominal: want.nominal!, stats: stats?.want });
  expect(a.map((f) => [f.code, f.span, f.message, f.related])).toEqual(b.map((f) => [f.code, f.span, f.message, f.related]));
  expectSame(
    got.analysis.structures.map((s) => ({ ...s, corners: s.corners })),
    want.analysis.structures.map((s) => ({ ...s, corners: s.corners })),
    'structures after the corner phase',
    1e-6,
  );
}

const CARD = /^(R\S+ \S+ \S+ )(\S+)(.*)$/;

/** The text with the value of one resistor card (chosen by `random`) replaced by a random positive value in another notation. */
export function randomValueEdit(text: string, random: () => number): string {
  const lines = text.split('\n');
  const cards = lines.flatMap((l, i) => (CARD.test(l) ? [i] : []));
  const at = cards[Math.floor(random() * cards.length)];
  const ohms = 300 * Math.pow(10, 2 * random());
  const forms = [`${(ohms / 1e3).toFixed(2)}k`, `${Math.round(ohms)}`, `${(ohms / 1e3).toPrecision(5)}K`, `${ohms.toExponential(3)}`];
  lines[at] = lines[at].replace(CARD, (_m, head: string, _v: string, tail: string) => `${head}${forms[Math.floor(random() * forms.length)]}${tail}`);
  return lines.join('\n');
}

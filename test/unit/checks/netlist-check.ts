// The shared helper of the check tests that read a whole netlist: analyse it and compare the warnings and errors by code, line and message.

import { expect } from 'vitest';
import type { Analysis, AnalysisOptions } from '../../../shared-analysis/src/analysis';
import { analyse, analyseSession, attachAllSizingFixes } from '../../../shared-analysis/src/service';
import { LineIndex } from '../../../shared-analysis/src/syntax/line-index';
import { MemoryWorkspace, type Finding, type Fix } from '../../../shared-analysis/src/types';

/** A finding a test expects: its code, the 1-based line it sits on, and text its message must carry. */
export interface Expected {
  code: string;
  line: number;
  says?: (string | RegExp)[];
}

export const URI = '/t/main.cir';

/** Analyses `text` as `/t/main.cir` (corners off unless the options turn them on). */
export function analyseNetlist(text: string, options: AnalysisOptions = {}, files: Record<string, string> = {}): Analysis {
  const ws = new MemoryWorkspace({ ...files, [URI]: text });
  return analyse({ uri: URI, text, version: 1 }, ws, { corners: { enabled: false }, ...options });
}

/** The 1-based line of a finding in its document. */
export function lineOf(a: Analysis, f: Finding): number {
  return new LineIndex(a.documents[f.uri]?.text ?? '').positionAt(f.span.start).line + 1;
}

/** Warnings and errors only: the findings that ask the designer to act. */
export function actionable(a: Analysis): Finding[] {
  return a.findings.filter((f) => f.severity === 'error' || f.severity === 'warning');
}

/**
 * The one entry point: the warnings and errors of `text` are exactly `expected` (by code and
 * line), each message carries its `says`, and no message shows NaN, `undefined` or an exponent.
 */
export function check(text: string, expected: Expected[], options: AnalysisOptions = {}): Analysis {
  const a = analyseNetlist(text, options);
  const got = actionable(a).map((f) => `${f.code}@${lineOf(a, f)}`).sort();
  expect(got, actionable(a).map((f) => `${f.code}@${lineOf(a, f)}: ${f.message}`).join('\n')).toEqual(expected.map((e) => `${e.code}@${e.line}`).sort());
  for (const e of expected) {
    const f = a.findings.find((x) => x.code === e.code && lineOf(a, x) === e.line)!;
    for (const s of e.says ?? []) expect(f.message).toMatch(s);
  }
  for (const f of a.findings) {
    expect(f.message).not.toMatch(/NaN|undefined|\de[+-]?\d|×10\^/);
    expect(JSON.stringify(f.data ?? {})).not.toMatch(/NaN/);
  }
  return a;
}

/** Applies a fix's edits to the text (from the end, so offsets stay valid). */
export function apply(text: string, fix: Fix): string {
  let out = text;
  for (const e of [...fix.edits].sort((a, b) => b.span.start - a.span.start)) out = out.slice(0, e.span.start) + e.newText + out.slice(e.span.end);
  return out;
}

/** Analyses with every fix computed, as the command line does (the solver-backed ones included). */
export function analyseWithFixes(text: string, options: AnalysisOptions = {}): Analysis {
  const session = analyseSession({ uri: URI, text }, new MemoryWorkspace({ [URI]: text }), { corners: { enabled: false }, ...options });
  attachAllSizingFixes(session);
  return session.analysis;
}

/**
 * The fix check every fix kind gets: apply the first (preferred) fix of the finding, re-analyse,
 * and assert the finding is gone and no warning or error appeared that was not there before.
 */
export function applyAndRecheck(text: string, code: string, pick?: (fixes: Fix[]) => Fix | undefined): { fixed: string; before: Analysis; after: Analysis; fix: Fix } {
  const before = analyseWithFixes(text);
  const f = before.findings.find((x) => x.code === code);
  expect(f, code).toBeDefined();
  const fix = pick ? pick(f!.fixes ?? []) : (f!.fixes?.find((x) => x.preferred) ?? f!.fixes?.[0]);
  expect(fix, `a fix for ${code}`).toBeDefined();
  const fixed = apply(text, fix!);
  const after = analyseNetlist(fixed);
  expect(after.findings.some((x) => x.code === code)).toBe(false);
  const key = (x: Finding) => x.code;
  const beforeCodes = new Set(actionable(before).map(key));
  expect(actionable(after).map(key).filter((c) => !beforeCodes.has(c))).toEqual([]);
  return { fixed, before, after, fix: fix! };
}


// Shared helpers for the editor-feature tests: a cursor marker in inline netlists, analysis through the facade, and reading numbers back from display text.

import { analyse } from '../../../shared-analysis/src/service';
import type { Analysis } from '../../../shared-analysis/src/analysis';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

/** The cursor marker in test netlists. */
export const CURSOR = '|';

/** Removes the cursor marker and returns the text and the marker's UTF-16 offset. */
export function withCursor(marked: string): { text: string; offset: number } {
  const offset = marked.indexOf(CURSOR);
  if (offset < 0) throw new Error('The test netlist has no cursor marker.');
  return { text: marked.slice(0, offset) + marked.slice(offset + 1), offset };
}

/** Analyses `text` as `/t/main.cir` with the other files given (corners off unless asked for, to keep tests fast). */
export function analyseText(text: string, files: Record<string, string> = {}, corners = false): Analysis {
  const ws = new MemoryWorkspace({ ...files, '/t/main.cir': text });
  return analyse({ uri: '/t/main.cir', text, version: 1 }, ws, { corners: { enabled: corners } });
}

const PREFIX: Record<string, number> = { T: 1e12, G: 1e9, M: 1e6, k: 1e3, '': 1, m: 1e-3, µ: 1e-6, u: 1e-6, n: 1e-9, p: 1e-12, f: 1e-15 };

/**
 * Reads the first quantity after `label` in display text (`IC 412 µA`, `Current 5 mA`), as a
 * number in SI units. Throws when it is not there, so a missing value fails the test.
 */
export function quantityAfter(text: string, label: string, unit: string): number {
  const esc = label.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
  const re = new RegExp(`${esc}\\s*[:=]?\\s*([−-]?[0-9.]+(?:e[−-]?[0-9]+)?)\\s*([TGMkmµunpf]?)${unit}`);
  const m = re.exec(text);
  if (!m) throw new Error(`No "${label} … ${unit}" quantity in:\n${text}`);
  return Number(m[1].replace('−', '-')) * PREFIX[m[2]];
}

/** Relative difference |a − b| / |b|. */
export function relErr(a: number, b: number): number {
  return Math.abs(a - b) / Math.abs(b);
}

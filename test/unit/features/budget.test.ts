// Editor features within a work budget: a count of work units (and, in the server, a deadline read from a clock),
// so no feature can hold the thread that answers the editor. Counts and an injected clock make every cut
// reproducible; nothing here is timed.

import { describe, expect, it } from 'vitest';
import { WorkBudget } from '../../../shared-analysis/src/features/budget';
import { documentSymbols, OUTLINE_CUT_NAME, type OutlineSymbol } from '../../../shared-analysis/src/features/symbols';
import { inlayHints } from '../../../shared-analysis/src/features/inlay';
import { referencesAt, renameAt } from '../../../shared-analysis/src/features/navigation';
import { completionListAt, completionsAt, MAX_COMPLETION_ITEMS } from '../../../shared-analysis/src/features/completion';
import { hoverAt } from '../../../shared-analysis/src/features/hover';
import { analyseText } from './fixture';

const URI = '/t/main.cir';

/** An invented bias network: an NPN mirror, a cell subcircuit used 30 times, and a ladder of `rungs` resistors to ground. */
function network(rungs: number): string {
  const lines = [
    'Budget checks',
    'VCC vcc 0 DC 9',
    'RREF vcc ref 8.2k',
    'Q1 ref ref 0 QN',
    'Q2 out ref 0 QN',
    'RL vcc out 2.2k',
    '.subckt cell top bot',
    'RA top mid 1k',
    'RB mid bot 1k',
    '.ends cell',
    '.model QN NPN (IS=1e-15 BF=150)',
  ];
  for (let i = 0; i < 30; i++) lines.push(`X${i} vcc 0 cell`);
  for (let i = 0; i < rungs; i++) lines.push(`RL${i} ${i === 0 ? 'vcc' : `n${i}`} ${i === rungs - 1 ? '0' : `n${i + 1}`} 1k`);
  lines.push('.end', '');
  return lines.join('\n');
}

const flat = (list: OutlineSymbol[]): string[] => list.flatMap((s) => [`${s.kind} ${s.name}`, ...flat(s.children)]);

describe('the work budget', () => {
  it('answers true until the count is spent, then false for good', () => {
    const b = new WorkBudget(5);
    expect([b.spend(), b.spend(2), b.spend(2), b.spend(), b.spend()]).toEqual([true, true, true, false, false]);
    expect(b.exhausted).toBe(true);
    expect(new WorkBudget(5).exhausted).toBe(false);
  });

  it('stops at the first clock reading past the deadline (an injected clock that jumps, so nothing is timed)', () => {
    let now = 0;
    const b = new WorkBudget(1e9, 100, () => now);
    // The clock is read every 256 units: within the deadline nothing stops.
    for (let k = 0; k < 1000; k++) expect(b.spend()).toBe(true);
    now = 101;
    let spent = 0;
    while (b.spend()) spent++;
    expect(b.exhausted).toBe(true);
    // Stopped at the next reading, within 256 units of the jump.
    expect(spent).toBeLessThan(256);
  });
});

describe('editor features cut at a budget', () => {
  const a = analyseText(network(400));
  const text = a.documents[URI]!.text;

  it('ends a cut outline with an entry that says so, after entries of the full outline', () => {
    // 200 parameters: an outline of 200 entries besides the mirror, the subcircuit and the model.
    const params = Array.from({ length: 200 }, (_, i) => `.param w${i}=${i + 1}k`).join('\n');
    const a = analyseText(network(50).replace('.end', `${params}\n.end`));
    const full = documentSymbols(a, URI);
    expect(flat(full).length).toBeGreaterThan(200);
    expect(flat(full)).not.toContain(`cut-short ${OUTLINE_CUT_NAME}`);
    // A budget larger than the work changes nothing.
    expect(documentSymbols(a, URI, new WorkBudget(1e9))).toEqual(full);
    const budget = new WorkBudget(40);
    const cut = documentSymbols(a, URI, budget);
    expect(budget.exhausted).toBe(true);
    const last = cut[cut.length - 1]!;
    expect(last.kind).toBe('cut-short');
    expect(last.detail).toMatch(/time budget/);
    // Every other entry is one of the full outline's.
    const rest = flat(cut.slice(0, -1));
    expect(rest.length).toBeGreaterThan(0);
    expect(rest.length).toBeLessThan(flat(full).length);
    for (const entry of rest) expect(flat(full)).toContain(entry);
  });

  it('labels the cards reached within the budget and no others', () => {
    const span = { start: 0, end: text.length };
    const full = inlayHints(a, URI, span, 'full');
    expect(full.length).toBeGreaterThan(100);
    const budget = new WorkBudget(60);
    const cut = inlayHints(a, URI, span, 'full', 'afterCode', budget);
    expect(budget.exhausted).toBe(true);
    expect(cut.length).toBeGreaterThan(0);
    expect(cut).toEqual(full.slice(0, cut.length));
  });

  it('returns the references found within the budget, and refuses a rename it cannot finish', () => {
    const at = text.indexOf('VCC vcc') + 5;
    const full = referencesAt(a, URI, at, { includeDeclaration: true });
    // The supply node: the source, the mirror's two resistors, 30 instances and the top of the ladder.
    expect(full.length).toBe(34);
    const budget = new WorkBudget(20);
    const cut = referencesAt(a, URI, at, { includeDeclaration: true }, budget);
    expect(budget.exhausted).toBe(true);
    expect(cut.length).toBeLessThan(full.length);
    expect(cut).toEqual(full.slice(0, cut.length));
    // A partial rename would split the node: no edit at all, and a reason.
    const refused = renameAt(a, URI, at, 'supply', new WorkBudget(20));
    expect('error' in refused && refused.error).toMatch(/not made/);
    const done = renameAt(a, URI, at, 'supply');
    expect('edits' in done && done.edits.length).toBe(34);
  });

  it('marks a completion list incomplete when the budget runs out or the names are too many, keeping the typed word', () => {
    // 1,500 ladder nodes: more names than one answer carries.
    const big = analyseText(network(1500));
    const bigText = big.documents[URI]!.text;
    // The second node of a new resistor, typed as "n14".
    const edited = bigText.replace('.end', 'RNEW vcc n14\n.end');
    const live = { ...big, documents: { ...big.documents, [URI]: { ...big.documents[URI]!, text: edited } } };
    const at = edited.indexOf('RNEW vcc n14') + 'RNEW vcc n14'.length;
    const all = completionsAt(live, URI, at);
    expect(all.length).toBeLessThanOrEqual(MAX_COMPLETION_ITEMS);
    const list = completionListAt(live, URI, at);
    expect(list.incomplete).toBe(true);
    // The items kept are the names that begin with what was typed: n14, n140 … n149, n1400 … n1499.
    expect(list.items.length).toBe(111);
    for (const item of list.items) expect(item.label.toLowerCase().startsWith('n14')).toBe(true);
    const small = analyseText(network(20));
    const smallText = small.documents[URI]!.text.replace('.end', 'RNEW vcc n\n.end');
    const smallLive = { ...small, documents: { ...small.documents, [URI]: { ...small.documents[URI]!, text: smallText } } };
    const smallAt = smallText.indexOf('RNEW vcc n') + 'RNEW vcc n'.length;
    expect(completionListAt(smallLive, URI, smallAt).incomplete).toBe(false);
    const budget = new WorkBudget(10);
    expect(completionListAt(smallLive, URI, smallAt, budget).incomplete).toBe(true);
  });

  it('says in the hover when it stopped at the budget', () => {
    const at = text.indexOf('Q2 out') + 4;
    const full = hoverAt(a, URI, at)!;
    expect(full.markdown).not.toMatch(/Cut short/);
    expect(hoverAt(a, URI, at, new WorkBudget(1e9))).toEqual(full);
    const cut = hoverAt(a, URI, at, new WorkBudget(0))!;
    expect(cut.markdown).toMatch(/Cut short: this hover stopped at the editor's time budget/);
  });
});

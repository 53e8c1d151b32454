// Taking a result in from the worker: the findings come first, so the server can publish diagnostics before
// the cards, elements, point and structures of a large result are in.

import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { existsSync } from 'node:fs';
import { WorkerHost } from '../../server/src/worker-host';
import { adoptKeptCards } from '../../server/src/analysis-transfer';
import { analyse } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { hoverAt } from '../../shared-analysis/src/features/hover';
import { inlayHints } from '../../shared-analysis/src/features/inlay';

const URI = 'file:///take-in.cir';

/**
 * These tests analyse and take in results of 1,200 to 12,000 ladder resistors through a real worker: up to 20 s each when
 * the machine runs other test files beside them. The limit only stops a hang; it states no speed.
 */
const LARGE_RESULT_TIMEOUT_MS = 120_000;

/** An invented NPN mirror whose load leaves the output saturated, plus a ladder of `rungs` resistors (several parts of cards and elements). */
function netlist(rungs: number): string {
  const ladder = Array.from({ length: rungs }, (_, i) => `RL${i} ${i === 0 ? 'vcc' : `l${i}`} ${i === rungs - 1 ? '0' : `l${i + 1}`} 1k`).join('\n');
  return `take-in test\nVCC vcc 0 5\nR1 vcc r 4.3k\nQ1 r r 0 QN\nQ2 o r 0 QN\nRC vcc o 200k\n.model QN NPN (IS=1e-15 BF=100 VAF=80)\n${ladder}\n.end\n`;
}

describe('taking a result in', () => {
  it('hands over the complete findings of a large result before any other part, and they are the final ones', async () => {
    const script = join(__dirname, '../../dist/analysis-worker.js');
    if (!existsSync(script)) throw new Error('dist/analysis-worker.js is missing: run `npm run build` first (npm test does).');
    const host = new WorkerHost({ script, log: () => undefined, hardDeadlineMs: 60000 });
    // 7,000 rungs: over 32 parts, so the result is taken in slices.
    const text = netlist(7000);
    try {
      host.setDocument(URI, text);
      const events: string[] = [];
      let early: string | undefined;
      const { analysis } = await host.analyse(URI, 1, { corners: { enabled: false } }, {
        onPart: (index) => events.push(`part ${index}`),
        onFindings: (partial, small) => {
          events.push('findings');
          expect(small).toBe(false);
          // What a publish reads: the findings and the texts to place them; nothing else is in yet.
          early = JSON.stringify(partial.findings);
          expect(partial.documents[URI]?.text).toBe(text);
          expect(partial.circuit?.elements.length ?? 0).toBe(0);
        },
      });
      // The independent computation: the engine run in this thread on the same text.
      const direct = analyse({ uri: URI, text, version: 1 }, new MemoryWorkspace({ [URI]: text }), { corners: { enabled: false } });
      expect(direct.findings.length).toBeGreaterThan(0);
      expect(early).toBe(JSON.stringify(direct.findings));
      expect(JSON.stringify(analysis.findings)).toBe(early);
      // Called once, with the header (a few findings travel in it), before any of the 30-odd parts of the rest.
      expect(events.filter((e) => e === 'findings')).toHaveLength(1);
      expect(events[0]).toBe('findings');
      expect(events.length).toBeGreaterThan(33);
      expect(analysis.circuit?.elements.length).toBe(7005);
      // A small result (1,200 rungs: fewer parts, which come whole in one message) is announced from its header too,
      // before any part is merged, and marked small (the server publishes a small result's findings then only when the
      // netlist's last small merge fit in one slice, and holds requests for the merge; else once the result is accepted).
      const smallText = netlist(1200);
      host.setDocument(URI, smallText);
      const announced: { findings: string; elements: number; small: boolean }[] = [];
      let partsBeforeAnnounced = 0;
      const small = await host.analyse(URI, 2, { corners: { enabled: false } }, {
        onPart: () => {
          if (announced.length === 0) partsBeforeAnnounced++;
        },
        onFindings: (partial, isSmall) => {
          announced.push({ findings: JSON.stringify(partial.findings), elements: partial.circuit?.elements.length ?? 0, small: isSmall });
        },
      });
      const smallDirect = analyse({ uri: URI, text: smallText, version: 2 }, new MemoryWorkspace({ [URI]: smallText }), { corners: { enabled: false } });
      expect(announced).toEqual([{ findings: JSON.stringify(smallDirect.findings), elements: 0, small: true }]);
      expect(partsBeforeAnnounced).toBe(0);
      expect(small.analysis.circuit?.elements.length).toBe(smallDirect.circuit?.elements.length);
    } finally {
      host.dispose();
    }
  }, LARGE_RESULT_TIMEOUT_MS);

  it('copies the cards an edit leaves alone from the result the caller holds, through the worker', async () => {
    const script = join(__dirname, '../../dist/analysis-worker.js');
    if (!existsSync(script)) throw new Error('dist/analysis-worker.js is missing: run `npm run build` first (npm test does).');
    const host = new WorkerHost({ script, log: () => undefined, hardDeadlineMs: 60000 });
    const text = netlist(1200);
    const edited = text.replace('RL600 l600 l601 1k', 'RL600 l600 l601 1.5k');
    try {
      host.setDocument(URI, text);
      let whole = 0;
      const first = await host.analyse(URI, 1, { corners: { enabled: false } }, { onPart: () => whole++ });
      host.setDocument(URI, edited);
      let fewer = 0;
      const second = await host.analyse(URI, 2, { corners: { enabled: false } }, { held: first.analysis, onPart: () => fewer++ });
      // The independent computation: the engine's own parse of the edited text.
      const direct = analyse({ uri: URI, text: edited, version: 2 }, new MemoryWorkspace({ [URI]: edited }), { corners: { enabled: false } });
      // Adopted as the server adopts a result it accepts: the shared cards past the edit are moved.
      adoptKeptCards(second.analysis);
      expect(second.analysis.documents[URI]).toEqual(direct.documents[URI]);
      expect(second.analysis.documents[URI]?.cards[5]).toBe(first.analysis.documents[URI]?.cards[5]);
      expect(first.analysis.documents[URI]?.text).toBe(text);
      // Fewer parts: the cards before and after the edited one are one kept run each (a few bytes) instead of slices of 400 cards.
      expect(fewer).toBeLessThan(whole);
    } finally {
      host.dispose();
    }
  }, LARGE_RESULT_TIMEOUT_MS);

  it('answers hovers and inlay hints during a sliced take-in from the held result as it was, and after adoption from the new one', async () => {
    const script = join(__dirname, '../../dist/analysis-worker.js');
    if (!existsSync(script)) throw new Error('dist/analysis-worker.js is missing: run `npm run build` first (npm test does).');
    const host = new WorkerHost({ script, log: () => undefined, hardDeadlineMs: 60000 });
    // 12,000 rungs: taken in slices (the kept cards travel in a few parts, the elements in 30). The edit lengthens a
    // value near the top, so nearly every card is kept and moved; the two edits after it keep the length (nothing to
    // move) and shorten it again.
    const texts = [netlist(12000)];
    texts.push(texts[0]!.replace('R1 vcc r 4.3k', 'R1 vcc r 4.75k'), texts[0]!.replace('R1 vcc r 4.3k', 'R1 vcc r 4.7k'), texts[0]!.replace('R1 vcc r 4.3k', 'R1 vcc r 5k'));
    // Devices before the edit, on the edited card, just past it and far past it.
    const needles = ['Q1 r r', 'R1 vcc', 'RC vcc', 'RL10 ', 'RL2500 ', 'RL4999 '];
    /** What a hover at each needle and the inlay hints of a stretch of lines past the edit show, as text (so a later change of the objects shows). */
    const answers = (a: Analysis, text: string): string[] => {
      const hovers = needles.map((n) => JSON.stringify(hoverAt(a, URI, text.indexOf(n) + 1) ?? null));
      const from = text.indexOf('RL2490 ');
      return [...hovers, JSON.stringify(inlayHints(a, URI, { start: from, end: text.indexOf('RL2510 ') }, 'full'))];
    };
    try {
      host.setDocument(URI, texts[0]!);
      let held = (await host.analyse(URI, 1, { corners: { enabled: false } })).analysis;
      for (let v = 1; v < texts.length; v++) {
        const before = answers(held, texts[v - 1]!);
        host.setDocument(URI, texts[v]!);
        let turns = 0;
        const heldNow = held;
        // Between parts the server answers queued requests from the result it holds: that result must read exactly as before.
        const taken = await host.analyse(URI, v + 1, { corners: { enabled: false } }, {
          held: heldNow,
          onPart: () => {
            if (turns++ % 8 === 0) expect(answers(heldNow, texts[v - 1]!)).toEqual(before);
          },
        });
        expect(turns).toBeGreaterThan(33);
        expect(answers(heldNow, texts[v - 1]!)).toEqual(before);
        adoptKeptCards(taken.analysis);
        // The independent computation: the engine run in this thread on the edited text.
        const direct = analyse({ uri: URI, text: texts[v]!, version: v + 1 }, new MemoryWorkspace({ [URI]: texts[v]! }), { corners: { enabled: false } });
        expect(answers(taken.analysis, texts[v]!)).toEqual(answers(direct, texts[v]!));
        held = taken.analysis;
      }
    } finally {
      host.dispose();
    }
  }, LARGE_RESULT_TIMEOUT_MS);
});

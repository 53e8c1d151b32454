// The hover on a subcircuit port with many instances: resolved per definition in one pass over the
// instances, the first few shown in full and the rest as one line with their count and voltage range.
// (Its cost at 1k/4k/16k instances is printed by test/bench/editor-features-bench.ts, not timed here.)

import { describe, expect, it } from 'vitest';
import { analyse } from '../../../shared-analysis/src/service';
import { hoverAt } from '../../../shared-analysis/src/features/hover';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

const URI = '/w/ladder.cir';
const N = 300;

/** N dividers, one per instance: instance i has its `mid` port at 10 V · (i+1)k/((i+1)k + 1k), worked out below. */
function ladder(): string {
  const lines = ['Divider array', 'VS top 0 10', '.subckt half a mid r=1k', 'RT a mid 1k', 'RB mid 0 {r}', '.ends half'];
  for (let i = 0; i < N; i++) lines.push(`X${i} top m${i} half r=${i + 1}k`);
  return lines.join('\n') + '\n.end\n';
}

describe(`hover on a subcircuit port with ${N} instances`, () => {
  const text = ladder();
  const a = analyse({ uri: URI, text }, new MemoryWorkspace({}), { corners: { enabled: false } });

  for (const [where, offset] of [
    ['on the .subckt card', text.indexOf('.subckt half a mid') + 15],
    ['on a card inside that uses it', text.indexOf('RT a mid') + 6],
  ] as const) {
    it(`lists the first instances and summarises the rest, ${where}`, () => {
      const h = hoverAt(a, URI, offset)!;
      expect(h).toBeDefined();
      const sections = h.markdown.split('\n\n---\n\n');
      expect(sections.length).toBe(8); // 7 in full, then one summary
      expect(sections[0]).toMatch(/^Node \*\*m0\*\*: 5 V/); // 10 V · 1k/(1k + 1k)
      // The other 293 instances: X7 … X299; the divider gives 10·(i+1)/(i+2) V, from 8/9·10 to 300/301·10.
      const lo = (10 * 8) / 9;
      const hi = (10 * 300) / 301;
      const m = /^…and (\d+) more instances \(m7 to m299\): from ([\d.]+) V to ([\d.]+) V\.$/.exec(sections[7]!);
      expect(m, sections[7]).not.toBeNull();
      expect(Number(m![1])).toBe(N - 7);
      expect(Math.abs(Number(m![2]) - lo)).toBeLessThan(0.01);
      expect(Math.abs(Number(m![3]) - hi)).toBeLessThan(0.01);
    });
  }
});

describe(`hover on a device card of a subcircuit with ${N} instances`, () => {
  it('shows the first instances in full and counts the rest', () => {
    const text = ladder();
    const a = analyse({ uri: URI, text }, new MemoryWorkspace({}), { corners: { enabled: false } });
    const h = hoverAt(a, URI, text.indexOf('RB mid 0') + 1)!;
    const sections = h.markdown.split('\n\n---\n\n');
    expect(sections.length).toBe(8);
    expect(sections[0]).toMatch(/X0\.RB/);
    expect(sections[7]).toBe(`…and ${N - 7} more instances (X7.RB to X299.RB).`);
  });
});

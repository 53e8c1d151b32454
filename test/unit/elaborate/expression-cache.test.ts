// The compiled-expression cache is bounded by an estimate of the memory it holds, not only by its number of entries.
import { describe, expect, it } from 'vitest';
import { COMPILED_BUDGET_BYTES, compileExpression, expressionCacheUsage } from '../../../shared-analysis/src/elaborate/expressions';

/** A distinct expression of about `length` characters: the largest of many parameters (flat, so within the nesting limit). */
function longExpression(seed: number, length: number): string {
  const parts: string[] = [`${seed}`];
  let size = 5;
  while (size < length) {
    const p = `p${parts.length}`;
    parts.push(p);
    size += p.length + 1;
  }
  return `max(${parts.join(',')})`;
}

describe('compiled-expression cache', () => {
  it('keeps its estimated size within the budget when many long expressions pass through (edits of a 3 KB expression)', () => {
    const length = 3000;
    for (let i = 0; i < 300; i++) expect(compileExpression(longExpression(i, length), 0).ok).toBe(true);
    const usage = expressionCacheUsage();
    expect(usage.bytes).toBeLessThanOrEqual(COMPILED_BUDGET_BYTES);
    // 300 expressions of 3 KB would be held whole by a cache bounded only by entries.
    expect(usage.entries).toBeLessThan(300);
  });

  it('still answers a repeated expression from the cache, and keeps the most recently used', () => {
    const a = compileExpression('1+2*x', 0);
    const b = compileExpression('1+2*x', 7);
    expect(a.ok && b.ok && a.expr.root === b.expr.root).toBe(true);
    for (let i = 0; i < 300; i++) {
      compileExpression(longExpression(1000 + i, 3000), 0);
      compileExpression('1+2*x', 0);
    }
    const c = compileExpression('1+2*x', 0);
    expect(a.ok && c.ok && a.expr.root === c.expr.root).toBe(true);
  });
});

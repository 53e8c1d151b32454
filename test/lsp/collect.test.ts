// The server's on-request garbage collection really frees a dropped structure (the memory fix for large analyses relies on it),
// and its young-generation collection runs only past the amount it is given.

import { describe, expect, it } from 'vitest';
import { getHeapSpaceStatistics } from 'node:v8';
import { collectGarbage, collectYoungGenerationPast } from '../../server/src/collect';

/** The one helper: heap in use after a collection, with `hold` alive, minus the same after it was dropped, in MB. */
function check(build: () => unknown, minFreedMB: number): void {
  let hold: unknown = build();
  collectGarbage();
  const withIt = process.memoryUsage().heapUsed;
  expect(hold).toBeDefined();
  hold = undefined;
  collectGarbage();
  const without = process.memoryUsage().heapUsed;
  expect((withIt - without) / 1048576).toBeGreaterThan(minFreedMB);
}

describe('collectGarbage', () => {
  it('frees 200,000 dropped span-like objects at once', () => {
    // 200,000 objects of two small-integer fields plus their array take well over 5 MB in V8 (common practice: ~40 B per small object on 64-bit).
    check(() => Array.from({ length: 200_000 }, (_, i) => ({ start: i, end: i + 1 })), 5);
  });
});

/** Bytes in use in V8's young generation, read from the runtime's own heap statistics (Node: v8.getHeapSpaceStatistics). */
function youngBytes(): number {
  return getHeapSpaceStatistics()
    .filter((s) => s.space_name === 'new_space' || s.space_name === 'new_large_object_space')
    .reduce((sum, s) => sum + s.space_used_size, 0);
}

describe('collectYoungGenerationPast', () => {
  it('empties the young generation of dropped objects once it holds more than asked, and leaves it alone below', () => {
    collectGarbage();
    // About 100,000 short-lived small objects: megabytes of garbage in the young generation (common practice: tens of bytes each on 64-bit).
    let garbage: unknown[] | undefined = Array.from({ length: 100_000 }, (_, i) => ({ i }));
    expect(garbage.length).toBe(100_000);
    garbage = undefined;
    const filled = youngBytes();
    expect(filled).toBeGreaterThan(2 ** 20);
    collectYoungGenerationPast(filled + 2 ** 20);
    expect(youngBytes()).toBeGreaterThan(filled / 2);
    collectYoungGenerationPast(2 ** 20);
    expect(youngBytes()).toBeLessThan(filled / 4);
  });
});

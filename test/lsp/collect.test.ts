// The server's on-request garbage collection really frees a dropped structure (the memory fix for large analyses relies on it).

import { describe, expect, it } from 'vitest';
import { collectGarbage } from '../../server/src/collect';

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

// What the Monte Carlo command accepts as runs and seed.

import { describe, expect, it } from 'vitest';
import { parseRunsAndSeed } from '../../../client/src/monte-carlo-input';

describe('parseRunsAndSeed', () => {
  it('reads runs alone (seed 1) or runs and a seed', () => {
    expect(parseRunsAndSeed('1000')).toEqual({ runs: 1000, seed: 1 });
    expect(parseRunsAndSeed(' 500 7 ')).toEqual({ runs: 500, seed: 7 });
    expect(parseRunsAndSeed('500,7')).toEqual({ runs: 500, seed: 7 });
  });
  it('refuses what it cannot run', () => {
    for (const t of ['', '0', '100001', '1e3', '-5', '10 -1', 'ten', '10 7 3']) expect(parseRunsAndSeed(t), t).toBeUndefined();
  });
});

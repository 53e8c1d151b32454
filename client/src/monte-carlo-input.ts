// Reads what the user types for a Monte Carlo run: the number of runs and an optional seed.

/** `1000` or `1000 7`: runs (1 to 100000) and an optional seed (default 1). */
export function parseRunsAndSeed(text: string): { runs: number; seed: number } | undefined {
  const m = /^\s*(\d+)(?:[\s,]+(\d+))?\s*$/.exec(text);
  if (!m) return undefined;
  const runs = Number(m[1]);
  const seed = m[2] === undefined ? 1 : Number(m[2]);
  if (!(runs >= 1 && runs <= 100000) || !(seed >= 0 && seed <= 4294967295)) return undefined;
  return { runs, seed };
}

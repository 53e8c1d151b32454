// The nearest known name to a misspelt one, for "did you mean …?" in findings and quick fixes.

/**
 * Optimal string alignment distance (Damerau–Levenshtein without repeated edits of one
 * substring; F. J. Damerau, Comm. ACM 7(3), 1964): insertions, deletions, substitutions and
 * swaps of two neighbouring letters each cost 1. Case is compared as given.
 */
export function editDistance(a: string, b: string): number {
  const n = a.length;
  const m = b.length;
  if (n === 0) return m;
  if (m === 0) return n;
  let prev2 = new Array<number>(m + 1).fill(0);
  let prev = Array.from({ length: m + 1 }, (_, j) => j);
  let cur = new Array<number>(m + 1).fill(0);
  for (let i = 1; i <= n; i++) {
    cur[0] = i;
    for (let j = 1; j <= m; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1;
      let d = Math.min(prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + cost);
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) d = Math.min(d, prev2[j - 2] + 1);
      cur[j] = d;
    }
    [prev2, prev, cur] = [prev, cur, prev2];
  }
  return prev[m];
}

/**
 * The one candidate closest to `word` (case-insensitive), when it is close enough to be a
 * slip of the keyboard and no other candidate is as close: at most one edit for words of up to
 * four letters, two for longer ones. Undefined when nothing qualifies or the choice is ambiguous.
 */
export function nearestName(word: string, candidates: Iterable<string>): string | undefined {
  const w = word.toLowerCase();
  const limit = w.replace(/^\./, '').length <= 4 ? 1 : 2;
  let best: string | undefined;
  let bestDistance = Infinity;
  let tied = false;
  for (const c of candidates) {
    const lc = c.toLowerCase();
    if (lc === w) return undefined; // not misspelt
    // Cheap bound first: lengths that differ by more than the limit cannot be close enough.
    if (Math.abs(lc.length - w.length) > limit) continue;
    const d = editDistance(w, lc);
    if (d > limit) continue;
    if (d < bestDistance) {
      best = c;
      bestDistance = d;
      tied = false;
    } else if (d === bestDistance && lc !== best?.toLowerCase()) tied = true;
  }
  return tied ? undefined : best;
}

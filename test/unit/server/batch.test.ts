// Batch runs of the command line: patterns expanded by qpoint, and the progress line written for a terminal.
import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { expandFiles, expandPattern, isPattern, progressLine } from '../../../server/src/batch';

/** A small tree of our own: boards with netlists at several depths, a hidden folder and a non-netlist. */
function tree(): string {
  const root = mkdtempSync(join(tmpdir(), 'qpoint-batch-'));
  for (const f of ['a.cir', 'b.cir', 'notes.txt', 'sub/c.cir', 'sub/deep/d.cir', 'sub/deep/e.sp', '.hidden/x.cir', 'cell1.cir', 'cell2.cir', 'cell10.cir']) {
    const p = join(root, f);
    mkdirSync(join(p, '..'), { recursive: true });
    writeFileSync(p, 'title\n.end\n');
  }
  return root;
}

describe('patterns on the command line', () => {
  // Semantics as POSIX sh pathname expansion (IEEE Std 1003.1, 2.13 "Pattern Matching Notation"): * any string,
  // ? one character, [...] a bracket expression, a leading dot matched only explicitly; ** any depth of folders
  // as common shells offer it (bash globstar; common practice).
  const root = tree();
  it('matches * and ? within one name, never crossing a folder, sorted', () => {
    expect(expandPattern('*.cir', root)).toEqual(['a.cir', 'b.cir', 'cell1.cir', 'cell10.cir', 'cell2.cir']);
    expect(expandPattern('cell?.cir', root)).toEqual(['cell1.cir', 'cell2.cir']);
    expect(expandPattern('[ab].cir', root)).toEqual(['a.cir', 'b.cir']);
    expect(expandPattern('[!ab]*.cir', root)).toEqual(['cell1.cir', 'cell10.cir', 'cell2.cir']);
  });
  it('matches ** at any depth, the folder itself included, and skips hidden folders', () => {
    expect(expandPattern('**/*.cir', root)).toEqual(['a.cir', 'b.cir', 'cell1.cir', 'cell10.cir', 'cell2.cir', 'sub/c.cir', 'sub/deep/d.cir']);
    expect(expandPattern('sub/**/*.sp', root)).toEqual(['sub/deep/e.sp']);
    expect(expandPattern('.hidden/*.cir', root)).toEqual(['.hidden/x.cir']);
  });
  it('keeps file names and unmatched patterns as written, so a missing file is still reported', () => {
    expect(isPattern('a.cir')).toBe(false);
    expect(expandFiles(['a.cir', 'sub/*.cir', 'none*.cir'], root)).toEqual(['a.cir', 'sub/c.cir', 'none*.cir']);
    // A network path is never listed: it stays as written, and reading refuses it.
    expect(expandFiles(['//host/share/*.cir', '\\\\host\\share\\*.cir'], root)).toEqual(['//host/share/*.cir', '\\\\host\\share\\*.cir']);
  });
});

describe('the progress line', () => {
  it('says how far the run is and fits the terminal width', () => {
    expect(progressLine(12, 40, 3400, 'boards/adc.cir')).toBe('qpoint: 12/40 files, 3.4 s — boards/adc.cir');
    const long = progressLine(1, 2, 0, 'x'.repeat(200), 60);
    expect([...long].length).toBeLessThanOrEqual(59);
    expect(long).toMatch(/^qpoint: 1\/2 files, 0\.0 s — …x+$/);
  });
});

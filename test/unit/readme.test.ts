// Keeps README.md true: the quick start has exactly two commands and the finding-code table matches the engine.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { withCodesTable } from '../../scripts/finding-codes';

const README = readFileSync(join(__dirname, '../../README.md'), 'utf8');

describe('README', () => {
  it('lists every finding code the engine reports, as the catalogue says (run `npm run docs:codes` to refresh)', () => {
    expect(README).toBe(withCodesTable(README));
  });

  it('has a quick start of exactly two command lines: the demo and the tests', () => {
    const quick = README.split('## Quick start')[1].split('\n## ')[0];
    const block = /```\n([\s\S]*?)```/.exec(quick)![1].trim().split('\n');
    expect(block).toEqual(['npm ci && npm run demo', 'npm test']);
  });

  it('has no relative links, which the extension packager refuses without a repository URL', () => {
    // A Markdown link whose target is not an absolute URL breaks `npm run package` (and so the editor test).
    const relative = [...README.matchAll(/\]\(([^)\s]+)\)/g)].map((m) => m[1]).filter((t) => !/^(https?:|mailto:|#)/.test(t));
    expect(relative).toEqual([]);
  });

  it('carries the safety caution', () => {
    expect(README).toMatch(/local codes and licensed practice/);
  });
});

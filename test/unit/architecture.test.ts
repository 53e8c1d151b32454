// Enforces the layering invariants of docs/ARCHITECTURE.md by reading the engine's import statements.
import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative } from 'node:path';

const ENGINE = join(__dirname, '../../shared-analysis/src');

function sourceFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = join(dir, name);
    return statSync(p).isDirectory() ? sourceFiles(p) : p.endsWith('.ts') ? [p] : [];
  });
}

function importsOf(file: string): string[] {
  const text = readFileSync(file, 'utf8');
  const specs: string[] = [];
  for (const m of text.matchAll(/(?:import|export)\s[^'"]*?from\s*['"]([^'"]+)['"]|import\(\s*['"]([^'"]+)['"]\s*\)|require\(\s*['"]([^'"]+)['"]\s*\)/g)) {
    specs.push(m[1] ?? m[2] ?? m[3]);
  }
  return specs;
}

describe('engine layering', () => {
  const files = sourceFiles(ENGINE);

  it('finds the engine sources', () => {
    expect(files.length).toBeGreaterThan(5);
  });

  it.each(files.map((f) => [relative(ENGINE, f), f]))('%s imports nothing from vscode and does no I/O', (_name, file) => {
    for (const spec of importsOf(file)) {
      expect(spec, `${file} imports ${spec}`).not.toMatch(/^vscode/);
      expect(spec, `${file} imports ${spec}`).not.toMatch(/^(node:)?(fs|fs\/promises|child_process|net|http|https|worker_threads|path)$/);
      // Only relative imports and the expression library are allowed inside the engine.
      expect(spec.startsWith('.') || spec === 'mathjs', `${file} imports ${spec}`).toBe(true);
    }
  });
});

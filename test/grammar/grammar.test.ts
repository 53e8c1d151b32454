// Runs the TextMate grammar's scope-assertion fixtures through vscode-tmgrammar-test and checks the grammar's own invariants.
import { beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

const root = resolve(__dirname, '../..');
const runner = join(root, 'node_modules/vscode-tmgrammar-test/dist/unit.js');
const grammarPath = join(root, 'syntaxes/netlist.tmLanguage.json');
const configPath = join(root, 'syntaxes/language-configuration.json');

/** Runs the grammar test tool on some fixtures in one process; returns its exit status and output. */
function runFixtures(files: string[]): { status: number | null; output: string } {
  const r = spawnSync(process.execPath, [runner, '--compact', '--grammar', grammarPath, ...files], {
    cwd: root,
    encoding: 'utf8',
    timeout: 20000,
  });
  return { status: r.status, output: `${r.stdout ?? ''}${r.stderr ?? ''}` };
}

/** Every `name`/`contentName` in the grammar, however deeply nested. */
function scopeNames(node: unknown, out: string[] = []): string[] {
  if (Array.isArray(node)) node.forEach((n) => scopeNames(n, out));
  else if (node && typeof node === 'object') {
    for (const [k, v] of Object.entries(node)) {
      if ((k === 'name' || k === 'contentName') && typeof v === 'string') out.push(v);
      else scopeNames(v, out);
    }
  }
  return out;
}

const fixtures = readdirSync(__dirname).filter((f) => f.endsWith('.cir')).sort();

describe('netlist grammar fixtures', () => {
  let run: { status: number | null; output: string } | undefined;
  beforeAll(() => {
    run = runFixtures(fixtures.map((f) => join(__dirname, f)));
  });

  it('has fixtures to run', () => {
    expect(fixtures.length).toBeGreaterThanOrEqual(4);
  });

  it('passes every scope assertion (the tool exits 0 with no ERROR line)', () => {
    expect(run?.output).not.toMatch(/ERROR/);
    expect(run?.status, run?.output).toBe(0);
  });

  for (const f of fixtures) {
    it(`reports ${f} as passed`, () => {
      const lines = (run?.output ?? '').split('\n');
      expect(lines.some((l) => l.includes(f) && /run successful/.test(l)), run?.output).toBe(true);
    });
  }

  it('reports a wrong assertion as a failure (the runner can fail)', () => {
    const dir = mkdtempSync(join(tmpdir(), 'qpoint-grammar-'));
    try {
      const bad = join(dir, 'wrong.cir');
      writeFileSync(bad, [
        '* SYNTAX TEST "source.netlist" "deliberately wrong"',
        'Title',
        'R1 a b 1k',
        '* <-- constant.numeric.netlist',
        '',
      ].join('\n'));
      const { status, output } = runFixtures([bad]);
      expect(status).not.toBe(0);
      expect(output).toMatch(/Missing required scopes/);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('netlist grammar file', () => {
  const grammar = JSON.parse(readFileSync(grammarPath, 'utf8')) as Record<string, unknown>;

  it('is the source.netlist grammar and every scope it assigns ends in .netlist', () => {
    expect(grammar.scopeName).toBe('source.netlist');
    const names = scopeNames(grammar.repository).concat(scopeNames(grammar.patterns));
    expect(names.length).toBeGreaterThan(30);
    for (const n of names) {
      for (const part of n.split(/\s+/)) expect(part, n).toMatch(/\.netlist$/);
    }
  });

  it('resolves every #include to a repository entry', () => {
    const text = readFileSync(grammarPath, 'utf8');
    const repo = grammar.repository as Record<string, unknown>;
    const includes = [...text.matchAll(/"include":\s*"#([^"]+)"/g)].map((m) => m[1]);
    expect(includes.length).toBeGreaterThan(10);
    for (const inc of includes) expect(repo, inc).toHaveProperty([inc]);
  });
});

describe('language configuration', () => {
  const config = JSON.parse(readFileSync(configPath, 'utf8')) as {
    comments: { lineComment: string };
    wordPattern: string;
    folding: { markers: { start: string; end: string } };
  };

  /** The words VS Code would pick out of a line with the configured word pattern. */
  function check(line: string, expected: string[]): void {
    expect(line.match(new RegExp(config.wordPattern, 'g'))).toEqual(expected);
  }

  it('comments lines with an asterisk (the netlist comment convention)', () => {
    expect(config.comments.lineComment).toBe('*');
  });

  it('keeps hierarchical names and numbers with suffix and unit whole', () => {
    check('X1.Q2 out 0 mirror', ['X1.Q2', 'out', '0', 'mirror']);
    check('RREF vdd ref 10kOhm', ['RREF', 'vdd', 'ref', '10kOhm']);
    check('I1 0 n1 1.2e-3', ['I1', '0', 'n1', '1.2e-3']);
    check('R2 a b {rload*2}', ['R2', 'a', 'b', 'rload', '2']);
  });

  it('folds .subckt/.ends and library sections, not library references', () => {
    const start = new RegExp(config.folding.markers.start);
    const end = new RegExp(config.folding.markers.end);
    expect(start.test('.SUBCKT mirror in out')).toBe(true);
    expect(start.test('.lib slow')).toBe(true);
    expect(start.test('.lib "corners.lib" slow')).toBe(false);
    expect(end.test('.ends mirror')).toBe(true);
    expect(end.test('.ENDL slow')).toBe(true);
    expect(end.test('.end')).toBe(false);
  });
});

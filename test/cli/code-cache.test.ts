// The `qpoint` bin runs the CLI bundle from the V8 code cache the build writes (server/src/cli-loader.ts): the cache
// must be one this Node accepts, and a run through it must print what the bundle alone prints.
import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { copyFileSync } from 'node:fs';
import { join } from 'node:path';
import { codeCacheRejected, ROOT, runCli, scratchFolder } from './harness';

const BUNDLE = join(ROOT, 'dist/cli-main.js');
const scratch = scratchFolder('qpoint-code-cache-');

describe('the CLI code cache', () => {
  it('is accepted by this Node for the bundle as the loader wraps it', () => {
    // In a fresh process, as the bin runs (a test worker's flags may differ from the bin's).
    const r = codeCacheRejected('cli-main.cache');
    expect(r.stderr).toBe('');
    expect(r.stdout).toBe('false');
  });

  it('gives the same output and exit code as the bundle run alone', () => {
    const netlist = scratch.file(
      'mirror.cir',
      ['Two-output mirror', 'VCC vcc 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)', 'RR vcc r 10k', 'Q1 r r 0 QN', 'Q2 o1 r 0 QN', 'Q3 o2 r 0 QN', 'RL1 vcc o1 2k', 'RL2 vcc o2 1e9', '.end', ''].join('\n'),
    );
    for (const args of [['check', netlist], ['report', netlist], ['--version']]) {
      const loaded = runCli(args);
      const alone = spawnSync(process.execPath, [BUNDLE, ...args], { cwd: ROOT, encoding: 'utf8' });
      expect(loaded.stdout).toBe(alone.stdout);
      expect(loaded.stderr).toBe(alone.stderr);
      expect(loaded.code).toBe(alone.status);
    }
    // The netlist is not clean (an output with a 1 GΩ load is starved), so the comparison covers findings, not only a pass.
    expect(runCli(['check', netlist]).stdout).not.toBe('');
  });

  it('runs without a cache beside the bundle (an install that lost it) as with one', () => {
    const netlist = scratch.file('divider.cir', ['Divider', 'V1 a 0 DC 10', 'R1 a b 1k', 'R2 b 0 3k', '.end', ''].join('\n'));
    for (const f of ['cli.js', 'cli-main.js']) copyFileSync(join(ROOT, 'dist', f), join(scratch.dir, f));
    const bare = (args: string[]) => spawnSync(process.execPath, [join(scratch.dir, 'cli.js'), ...args], { cwd: ROOT, encoding: 'utf8' });
    const report = bare(['report', netlist]);
    const cached = runCli(['report', netlist]);
    expect(report.status).toBe(cached.code);
    expect(report.stdout).toBe(cached.stdout);
    // And it solves: the divider's middle node at 10 V · 3k / (1k + 3k) = 7.5 V (Ohm's law).
    const doc = JSON.parse(bare(['check', '--format', 'json', netlist]).stdout);
    expect(doc.files[0].operatingPoint.nodes.b).toBeCloseTo(7.5, 9);
  });
});

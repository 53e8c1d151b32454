// The built `qpoint` CLI over several files on a pool of worker threads (`--workers`): the output is the
// one a run in a single thread (`--workers 1`) writes, byte for byte and in the command line's order,
// with the same exit codes (README, "Exit codes"), and a worker that crashes or hangs costs its own
// file only. The netlists are our own scenarios.
import { describe, expect, it } from 'vitest';
import { runCli, scratchFolder } from './harness';

const scratch = scratchFolder('qpoint-batch-');

// Healthy: a divider has no mirror and nothing to flag.
const DIVIDER = `Strain-gauge excitation divider
V1 vdd 0 10
R1 vdd mid 4.7k
R2 mid 0 4.7k
.end
`;
// A missed target (an error): IREF ≈ (5 V − 0.7 V) / 8.2 kΩ ≈ 0.52 mA, far from the 2 mA asked (Ohm's law, VBE ≈ 0.7 V: common practice).
const MISSED = `Photodiode bias sink: NPN mirror with a stated target
VCC vcc 0 5
RREF vcc ref 8.2k
Q1 ref ref 0 qs
Q2 out ref 0 qs   ; expect 2mA ±5%
RL vcc out 1k
.model qs NPN (BF=150 VAF=80)
.end
`;
// A PMOS mirror whose 1:2 output drives 68 kΩ: 2 × 47 µA × 68 kΩ ≈ 6.4 V > 3.3 V, so it cannot stay saturated (an error).
const TRIODE = `Level-shifter bias: PMOS mirror sourcing two outputs
VDD vdd 0 3.3
MP1 g g vdd vdd pm W=10u L=1u
RG g 0 47k
MP2 o1 g vdd vdd pm W=10u L=1u
MP3 o2 g vdd vdd pm W=20u L=1u
R1 o1 0 20k
R2 o2 0 68k
.model pm PMOS (VTO=-0.6 KP=50u LAMBDA=0.03)
.end
`;

/** The files in an order that is not their names' order, so the output's order can only come from the command line. */
function files(): string[] {
  scratch.file('zeta-missed.cir', MISSED);
  scratch.file('alpha-divider.cir', DIVIDER);
  scratch.file('mid-triode.cir', TRIODE);
  scratch.file('beta-divider.cir', DIVIDER.replace('4.7k', '3.3k'));
  // Named relative to the scratch folder, where the CLI runs.
  return ['zeta-missed.cir', 'alpha-divider.cir', 'mid-triode.cir', 'beta-divider.cir'];
}

/** Timings of the analysis stages are the only figures that differ from run to run. */
const untimed = (s: string) => s.replace(/"ms":\s?[0-9.e+-]+/g, '"ms":0');

const run = (args: string[], env: Record<string, string> = {}) => runCli(args, scratch.dir, 120000, env);

describe('qpoint check and report on worker threads', () => {
  const formats: [string, string][] = [
    ['check', 'text'],
    ['check', 'json'],
    ['check', 'sarif'],
    ['report', 'text'],
    ['report', 'json'],
    ['report', 'html'],
    ['report', 'markdown'],
  ];
  for (const [command, format] of formats) {
    it(`writes what one thread writes, in the command line's order: ${command} --format ${format}`, () => {
      const list = files();
      const one = run([command, '--format', format, '--workers', '1', ...list]);
      const two = run([command, '--format', format, '--workers', '2', ...list]);
      expect(two.code, two.stderr).toBe(one.code);
      expect(untimed(two.stdout)).toBe(untimed(one.stdout));
      expect(two.stderr).toBe(one.stderr);
      // Each file once, in the order given.
      const at = ['zeta-missed.cir', 'alpha-divider.cir', 'mid-triode.cir', 'beta-divider.cir'].map((n) => two.stdout.indexOf(n));
      if (command === 'report' || format === 'json') {
        expect(at.every((i) => i >= 0), two.stdout.slice(0, 400)).toBe(true);
        expect([...at].sort((x, y) => x - y)).toEqual(at);
      }
    }, 180_000);
  }

  it('keeps the documented exit codes: 0 clean, 1 findings at the fail level, 3 a file unreadable', () => {
    const [missed, divider, triode, divider2] = files();
    for (const workers of ['1', '2']) {
      expect(run(['check', '--workers', workers, divider!, divider2!]).code).toBe(0);
      expect(run(['check', '--workers', workers, divider!, missed!, triode!]).code).toBe(1);
      expect(run(['check', '--workers', workers, divider!, 'no-such-file.cir', missed!]).code).toBe(3);
      // The report exits 0 on findings, 3 when it could not do the job.
      expect(run(['report', '--workers', workers, divider!, missed!]).code).toBe(0);
      expect(run(['report', '--workers', workers, missed!, 'no-such-file.cir']).code).toBe(3);
    }
  }, 180_000);

  it('reports a crashed worker as its file\'s failure and keeps every other file', () => {
    const list = files();
    const clean = run(['check', '--workers', '2', ...list]);
    const crashed = run(['check', '--workers', '2', ...list], { QPOINT_TEST_WORKER_FAULT: 'crash:alpha-divider.cir' });
    expect(crashed.code).toBe(3);
    const lines = crashed.stdout.split('\n');
    expect(lines.filter((l) => l.includes('alpha-divider.cir'))).toEqual([
      'alpha-divider.cir:1:1 error analysis-stopped qpoint stopped with an internal error while analysing this file (please report it): Its worker thread stopped: planted crash for the tests.',
    ]);
    expect(crashed.stderr).toContain('qpoint: internal error in alpha-divider.cir:');
    // The other files' findings are all there, as in the run without the crash.
    expect(lines.filter((l) => !l.includes('alpha-divider.cir'))).toEqual(clean.stdout.split('\n'));
    // JSON too: every file has its entry, the crashed one with its failure.
    const json = JSON.parse(run(['check', '--format', 'json', '--workers', '2', ...list], { QPOINT_TEST_WORKER_FAULT: 'crash:zeta-missed.cir' }).stdout);
    expect(json.files.map((f: { path: string }) => f.path)).toEqual(list);
    expect(json.files[0].diagnostics.map((d: { code: string }) => d.code)).toEqual(['analysis-stopped']);
    expect(json.files[2].diagnostics.some((d: { code: string }) => d.code === 'mirror-output-out-of-region')).toBe(true);
  }, 180_000);

  it('stops a worker that hangs past --file-time-limit and reports that file alone', () => {
    const list = files();
    const clean = run(['check', '--workers', '2', ...list]);
    const hung = run(['check', '--workers', '2', '--file-time-limit', '2', ...list], { QPOINT_TEST_WORKER_FAULT: 'hang:mid-triode.cir' });
    expect(hung.code).toBe(3);
    const lines = hung.stdout.split('\n');
    expect(lines.filter((l) => l.includes('mid-triode.cir'))).toEqual([
      'mid-triode.cir:1:1 error analysis-stopped qpoint stopped with an internal error while analysing this file (please report it): It ran past the 2 s time limit of a file (--file-time-limit), so its worker thread was stopped.',
    ]);
    expect(lines.filter((l) => !l.includes('mid-triode.cir'))).toEqual(clean.stdout.split('\n').filter((l) => !l.includes('mid-triode.cir')));
  }, 180_000);

  it('takes --workers and --file-time-limit only as documented', () => {
    const [, divider] = files();
    for (const bad of [['--workers', '0'], ['--workers', 'two'], ['--workers', '1.5'], ['--file-time-limit', '0'], ['--file-time-limit', 'x']]) {
      const r = run(['check', ...bad, divider!]);
      expect(r.code, bad.join(' ')).toBe(2);
      expect(r.stderr).toContain(bad[0]!);
    }
    // More workers than cores only share the cores: taken as the number of cores.
    expect(run(['check', '--workers', '1000', divider!, divider!]).code).toBe(0);
    expect(run(['--help']).stdout).toMatch(/--workers N[\s\S]*--file-time-limit S/);
  }, 180_000);
});

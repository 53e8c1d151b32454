// How the `qpoint` bin starts a run (server/src/cli-launch.ts): large netlists are analysed in a second Node process
// started with V8 flags for a batch job. The choice is checked against the rule written out here; the second process
// must print what the bundle alone prints, read the code cache made for its flags, and end when the first is stopped.
import { describe, expect, it } from 'vitest';
import { spawn, spawnSync } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { LARGE_RUN_BYTES, LARGE_RUN_FLAGS, namedFileBytes, relaunchFlags } from '../../server/src/cli-launch';
import { CLI, codeCacheRejected, ROOT, runCli, scratchFolder } from './harness';
import { COUNTED_BELOW_BYTES } from '../../shared-analysis/src/columns';

const scratch = scratchFolder('qpoint-launch-');
const MB = 2 ** 20;
const bigMachine = { totalMemory: 64 * 1024 * MB, heapLimit: 4 * 1024 * MB };

/** An invented NPN sink array of `n` cells (reference resistor, diode-connected device, output device, load). */
function sinkArray(n: number, comment = 0): string {
  const lines = ['NPN sink array', 'VCC vcc 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)'];
  for (let i = 0; i < n; i++) lines.push(`RR${i} vcc r${i} ${10 + (i % 7)}k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN`, `RL${i} vcc o${i} ${1 + (i % 3)}k`);
  // Comment lines make the file large without making the analysis long.
  for (let i = 0; i < comment; i++) lines.push(`* note ${i}: the cells above are sized for about 0.4 mA each`);
  return [...lines, '.end', ''].join('\n');
}

describe('which runs start again', () => {
  it('starts netlists from LARGE_RUN_BYTES again with the large-run flags, once', () => {
    expect(relaunchFlags(LARGE_RUN_BYTES - 1, false, bigMachine)).toBeUndefined();
    expect(relaunchFlags(LARGE_RUN_BYTES, false, bigMachine)).toEqual(LARGE_RUN_FLAGS);
    expect(relaunchFlags(LARGE_RUN_BYTES, true, bigMachine)).toBeUndefined();
    expect(relaunchFlags(100 * MB, true, bigMachine)).toBeUndefined();
  });

  it('sizes the heap beyond 8 MB of netlist: 500 bytes of heap a byte, at most three quarters of memory', () => {
    const initial = (mb: number): string[] => LARGE_RUN_FLAGS.map((f) => (f.startsWith('--initial-old-space-size=') ? `--initial-old-space-size=${mb}` : f));
    // 20 MB of netlist wants 10,000 MB of heap; a 4 GB heap is less, so the flag is given. The old generation
    // before the first full collection: 256 bytes a byte, 5,120 MB, at most half the heap (5,000 MB).
    expect(relaunchFlags(20 * MB, false, bigMachine)).toEqual([...initial(5000), '--max-old-space-size=10000']);
    // On a 8 GB machine the cap is 6,144 MB, and half of it 3,072 MB.
    expect(relaunchFlags(20 * MB, false, { totalMemory: 8 * 1024 * MB, heapLimit: 2 * 1024 * MB })).toEqual([...initial(3072), '--max-old-space-size=6144']);
    // A heap already within a tenth of what is wanted is kept (9 MB wants 4,500 MB; 4,096 × 1.1 = 4,506 MB); the
    // old generation would wait for 256 × 9 = 2,304 MB, more than half the 4,096 MB heap, so 2,048 MB.
    expect(relaunchFlags(9 * MB, false, bigMachine)).toEqual(initial(2048));
    // Below 2 MB of netlist (512 MB / 256) the fixed value of the flags stays, which the code cache was made under.
    expect(relaunchFlags(LARGE_RUN_BYTES * 4, false, bigMachine)).toEqual(LARGE_RUN_FLAGS);
    expect(LARGE_RUN_FLAGS).toContain('--initial-old-space-size=512');
  });

  it('counts the files named, not options, option values or missing files', () => {
    const a = scratch.file('a.cir', 'x'.repeat(1000));
    const b = scratch.file('b.cir', 'y'.repeat(234));
    expect(namedFileBytes(['check', '--format', 'json', a, '--fail-level', 'error', b, join(scratch.dir, 'missing.cir'), scratch.dir])).toBe(1234);
  });
});

describe('a run started again', () => {
  it('prints what the bundle alone prints, with its exit code', () => {
    // 8,400 elements: the started process makes its element-sized columns (8 bytes an element, 64 KB and more) outside
    // V8's count (shared-analysis/src/columns.ts), the bundle alone as ordinary arrays; the documents must not differ.
    const netlist = scratch.file('large.cir', sinkArray(2100));
    expect(readFileSync(netlist).length).toBeGreaterThanOrEqual(LARGE_RUN_BYTES);
    expect(2100 * 4 * 8).toBeGreaterThanOrEqual(COUNTED_BELOW_BYTES);
    // Whole documents (several MB: spawnSync's default buffer of 1 MB would cut both at the same place), with the
    // stage times the JSON carries (`"ms"`) masked, the only figures that differ from run to run.
    const run = (script: string, args: string[]) => {
      const r = spawnSync(process.execPath, [script, ...args], { cwd: ROOT, encoding: 'utf8', maxBuffer: 1 << 28 });
      return { stdout: r.stdout.replace(/"ms":[0-9.e+-]+/g, '"ms":0'), stderr: r.stderr, code: r.status };
    };
    for (const args of [['check', '--format', 'json', netlist], ['check', '--format', 'sarif', netlist], ['report', netlist]]) {
      const started = run(CLI, args);
      const alone = run(join(ROOT, 'dist/cli-main.js'), args);
      // The JSON document whole (about 9 MB), the report's text, the SARIF log (no findings: about 200 bytes).
      expect(started.stdout.length).toBeGreaterThan(args[2] === 'json' ? 1 << 20 : args[0] === 'report' ? 10_000 : 100);
      expect(started.stdout).toBe(alone.stdout);
      expect(started.stderr).toBe(alone.stderr);
      expect(started.code).toBe(alone.code);
    }
  });

  it('is a second process, with this Node’s own arguments passed on; a small run is not', () => {
    // Each Node process started with --cpu-prof writes one profile when it ends.
    const profiles = (netlist: string): number => {
      const out = mkdtempSync(join(scratch.dir, 'profiles-'));
      spawnSync(process.execPath, ['--cpu-prof', `--cpu-prof-dir=${out}`, CLI, 'check', netlist], { cwd: ROOT });
      return readdirSync(out).filter((f) => f.endsWith('.cpuprofile')).length;
    };
    expect(profiles(scratch.file('big.cir', sinkArray(4, 3000)))).toBe(2);
    expect(profiles(scratch.file('small.cir', sinkArray(4)))).toBe(1);
  });

  it('reads a code cache this Node accepts under the large-run flags', () => {
    const r = codeCacheRejected('cli-main-large-run.cache', LARGE_RUN_FLAGS);
    expect(r.stderr).toBe('');
    expect(r.stdout).toBe('false');
  });

  it('ends when the first process is stopped, and the first ends by the same signal', async () => {
    // An array whose analysis takes seconds: a second process left running would still be found after the 1 s
    // this test waits for it to end.
    const netlist = scratch.file('long.cir', sinkArray(20000));
    const first = spawn(process.execPath, [CLI, 'check', '--format', 'json', netlist], { cwd: ROOT, stdio: 'ignore' });
    const second = await childOf(first.pid!);
    expect(alive(second)).toBe(true);
    const ended = new Promise<NodeJS.Signals | null>((resolve) => first.on('exit', (_code, signal) => resolve(signal)));
    first.kill('SIGTERM');
    expect(await ended).toBe('SIGTERM');
    await until(() => !alive(second), 1000);
    expect(alive(second)).toBe(false);
  }, 60000);
});

/** Whether process `pid` still exists (a zombie not yet reaped by its parent counts as gone). */
function alive(pid: number): boolean {
  try {
    return !/\) Z /.test(readFileSync(`/proc/${pid}/stat`, 'utf8'));
  } catch {
    return false;
  }
}

/**
 * The first child process of `pid`, as soon as it has one (read from /proc: Linux, as CI runs). Looked for at every
 * turn of the event loop, not every 20 ms: a signal sent then meets the first process while it is still starting the
 * second, which is when a stop must not be lost (at a 20 ms poll the test met that moment only on a loaded machine).
 */
async function childOf(pid: number): Promise<number> {
  const deadline = Date.now() + 20000;
  for (;;) {
    const child = readdirSync('/proc')
      .filter((d) => /^\d+$/.test(d))
      .map(Number)
      .find((p) => parentOf(p) === pid);
    if (child !== undefined) return child;
    if (Date.now() > deadline) throw new Error(`process ${pid} started no second process within 20 s`);
    await new Promise((r) => setImmediate(r));
  }
}

/** The parent's process id of `pid` (the fourth field of /proc/PID/stat, after the name in parentheses). */
function parentOf(pid: number): number | undefined {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    return Number(stat.slice(stat.lastIndexOf(')') + 2).split(' ')[1]);
  } catch {
    return undefined;
  }
}

/** Waits (polling every 20 ms, at most `limitMs`) until `done()` holds. */
async function until(done: () => boolean, limitMs = 20000): Promise<void> {
  for (let waited = 0; waited < limitMs && !done(); waited += 20) await new Promise((r) => setTimeout(r, 20));
}

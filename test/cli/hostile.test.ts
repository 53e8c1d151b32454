// The built `qpoint` CLI against hostile input: what a netlist may make it read, exit codes, option rules, escaping.
import { describe, expect, it, beforeAll } from 'vitest';
import { spawnSync, execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync, existsSync, mkdirSync, symlinkSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');

/** Runs the CLI with a deadline: a hang (a pipe, /dev/zero) fails the test instead of wedging it. */
function run(args: string[], opts: { cwd?: string; env?: Record<string, string> } = {}) {
  const r = spawnSync(process.execPath, [CLI, ...args], {
    cwd: opts.cwd ?? dir,
    encoding: 'utf8',
    timeout: 20000,
    env: { ...process.env, ...opts.env },
    maxBuffer: 64 * 1024 * 1024,
  });
  return { code: r.status, stdout: r.stdout ?? '', stderr: r.stderr ?? '', signal: r.signal };
}

let dir: string;
function file(name: string, text: string | Buffer): string {
  const p = join(dir, name);
  writeFileSync(p, text);
  return p;
}

beforeAll(() => {
  if (!existsSync(CLI)) throw new Error('dist/cli.js is missing: run `npm run build` first (npm test does).');
  dir = mkdtempSync(join(tmpdir(), 'qpoint-hostile-'));
});

const withInclude = (target: string) => `Hostile include\nV1 a 0 5\nR1 a 0 1k\n.include ${target}\n.end\n`;

/** The include-not-found finding of a run, from its JSON output. */
function includeFinding(out: string): { message: string; data?: { reason?: string } } | undefined {
  const doc = JSON.parse(out);
  return doc.files[0].diagnostics.find((d: { code: string }) => d.code === 'include-not-found');
}

describe('what an include may make the CLI read', () => {
  it('refuses a pipe without waiting for a writer', () => {
    const fifo = join(dir, 'pipe.inc');
    execFileSync('mkfifo', [fifo]);
    const r = run(['check', '--format', 'json', file('fifo.cir', withInclude('pipe.inc'))]);
    expect(r.signal).toBeNull();
    expect(includeFinding(r.stdout)?.message).toMatch(/is a pipe, not a netlist file/);
  });

  it('refuses devices such as /dev/zero and /dev/urandom even when reading anywhere is allowed', () => {
    for (const dev of ['/dev/zero', '/dev/urandom']) {
      const r = run(['check', '--include-anywhere', '--format', 'json', file('dev.cir', withInclude(dev))]);
      expect(r.signal, dev).toBeNull();
      expect(includeFinding(r.stdout)?.message, dev).toMatch(/is a device, not a netlist file/);
    }
  });

  it('keeps includes inside the allowed folders: no /proc/self/environ, no ../../etc/passwd', () => {
    const sub = join(dir, 'deep', 'er');
    mkdirSync(sub, { recursive: true });
    writeFileSync(join(sub, 'env.cir'), withInclude('/proc/self/environ'));
    writeFileSync(join(sub, 'passwd.cir'), withInclude('../../../../../../../../etc/passwd'));
    const secret = 'qpoint-test-secret-7f3a9';
    for (const name of ['env.cir', 'passwd.cir']) {
      for (const format of ['text', 'json', 'sarif']) {
        const r = run(['check', '--format', format, join(sub, name)], { cwd: sub, env: { QPOINT_SECRET: secret } });
        expect(r.stdout, `${name} ${format}`).not.toContain(secret);
        expect(r.stdout, `${name} ${format}`).not.toMatch(/root:x?:0/);
        expect(r.stdout, `${name} ${format}`).toMatch(/lies outside the folders qpoint may read/);
      }
    }
  });

  it('does not follow a symbolic link out of the allowed folders', () => {
    const link = join(dir, 'linked.inc');
    if (!existsSync(link)) symlinkSync('/etc/hostname', link);
    const r = run(['check', '--format', 'json', file('link.cir', withInclude('linked.inc'))]);
    expect(includeFinding(r.stdout)?.message).toMatch(/lies outside the folders qpoint may read/);
  });

  it('never touches network paths, in either spelling', () => {
    for (const ref of ['//fileserver/share/models.inc', '\\\\fileserver\\share\\models.inc']) {
      const r = run(['check', '--include-anywhere', '--format', 'json', file('unc.cir', withInclude(ref))]);
      expect(includeFinding(r.stdout)?.message, ref).toMatch(/network share, which qpoint never reads/);
    }
  });

  it('refuses a binary file and one over the size limit, and reads a sibling netlist file', () => {
    file('blob.inc', Buffer.from([0x52, 0x31, 0x20, 0x00, 0xff, 0x00, 0x0a]));
    const r = run(['check', '--format', 'json', file('blob.cir', withInclude('blob.inc'))]);
    expect(includeFinding(r.stdout)?.message).toMatch(/binary data, not netlist text/);
    file('good.inc', 'R2 a 0 2k\n');
    const ok = run(['check', '--format', 'json', file('good.cir', withInclude('good.inc'))]);
    expect(includeFinding(ok.stdout)).toBeUndefined();
  });

  it('reads other folders only when allowed with --include-root or --include-anywhere', () => {
    const lib = mkdtempSync(join(tmpdir(), 'qpoint-lib-'));
    writeFileSync(join(lib, 'models.inc'), 'R2 a 0 2k\n');
    const net = file('lib.cir', withInclude(join(lib, 'models.inc')));
    expect(includeFinding(run(['check', '--format', 'json', net]).stdout)?.message).toMatch(/outside/);
    expect(includeFinding(run(['check', '--include-root', lib, '--format', 'json', net]).stdout)).toBeUndefined();
    expect(includeFinding(run(['check', '--include-anywhere', '--format', 'json', net]).stdout)).toBeUndefined();
  });

  it('quotes no text of an included file that is not a netlist', () => {
    const secretLines = Array.from({ length: 6 }, (_, i) => `token_${i}: sk-live-abcdefghijklmnopqrstuvwxyz${i}`).join('\n');
    file('keys.inc', secretLines + '\n');
    const r = run(['check', '--format', 'json', file('keys.cir', withInclude('keys.inc'))]);
    expect(r.stdout).not.toContain('sk-live');
    expect(JSON.parse(r.stdout).files[0].diagnostics.map((d: { code: string }) => d.code)).toContain('include-not-netlist');
  });
});

describe('the file named on the command line', () => {
  it('is refused when it is a pipe, a device or binary, with exit code 3 and no hang', () => {
    const fifo = join(dir, 'root-pipe.cir');
    if (!existsSync(fifo)) execFileSync('mkfifo', [fifo]);
    const binary = file('root-binary.cir', Buffer.from([0x54, 0x0a, 0x00, 0x01]));
    for (const [p, why] of [[fifo, /is a pipe/], ['/dev/zero', /is a device/], [binary, /binary data/], [join(dir, 'missing.cir'), /does not exist/]] as const) {
      const r = run(['check', p]);
      expect(r.signal, p).toBeNull();
      expect(r.code, p).toBe(3);
      expect(r.stdout, p).toMatch(/error file-unreadable Cannot read/);
      expect(r.stdout, p).toMatch(why);
    }
  });
});

describe('exit codes and the command line', () => {
  it('prints the usage on stderr and exits 2 when given no arguments', () => {
    const r = run([]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/Usage:/);
    expect(r.stderr).toMatch(/Exit codes: 0 .*1 .*\n2 .*3 /);
  });

  it('refuses the corner and temperature values the editor settings refuse', () => {
    const net = file('opts.cir', withInclude('nothing.inc'));
    const bad = [
      ['--cold', '-300'],
      ['--hot', '10000'],
      ['--beta-low', '0'],
      ['--beta-high', '0.5'],
      ['--supply-tolerance', '1e308'],
      ['--temperature', ''],
      ['--temperature', '0x10'],
      ['--temperature', 'Infinity'],
      ['--hot', '-50'],
      ['--cold', '130'],
      ['--headroom-margin', '-1'],
      ['--severity', 'no-such-code=off'],
    ];
    for (const args of bad) {
      const r = run(['check', ...args, net]);
      expect(r.code, args.join(' ')).toBe(2);
      expect(r.stderr, args.join(' ')).toMatch(/^qpoint: /);
    }
    // The same values are fine within the rules.
    expect(run(['check', '--cold', '-55', '--hot', '150', '--beta-low', '0.3', '--temperature', '1e1', net]).code).not.toBe(2);
  });

  it('takes a file whose name starts with "-" after --', () => {
    const p = file('-dash.cir', 'Dash\nV1 a 0 5\nR1 a 0 1k\n.end\n');
    expect(run(['check', '-dash.cir']).code).toBe(2);
    const r = run(['check', '--', '-dash.cir'], { cwd: dir });
    expect(r.code).toBe(0);
    expect(existsSync(p)).toBe(true);
  });
});

describe('escape sequences in echoed text', () => {
  // ESC [ 2 J clears a terminal; 0x9b is the one-byte CSI; U+202E reverses the text that follows.
  const ESC = '\u001b[2J\u001b[31m';
  const NET = `Title ${ESC}forged\u009b1m \u202eevil\nV1 a 0 5\nR1 a b 1k\nQ1 b b 0 NO${ESC}SUCH\n.end\n`;

  it('prints control characters escaped in the text output, the report and the JSON and SARIF documents', () => {
    const p = file('esc.cir', NET);
    const outputs = [run(['check', p]).stdout, run(['report', '--no-corners', p]).stdout, run(['check', '--format', 'json', p]).stdout, run(['check', '--format', 'sarif', p]).stdout];
    for (const out of outputs) {
      expect(out).not.toMatch(/[\u001b\u009b\u202e]/);
    }
    expect(outputs[0]).toContain('\\x1b[2J');
    expect(outputs[1]).toContain('Title \\x1b[2J\\x1b[31mforged\\x9b1m \\u202eevil');
    // JSON keeps the value: parsing gives back the characters.
    expect(JSON.stringify(JSON.parse(outputs[2]))).toContain('\\u001b[2J');
    expect(JSON.parse(outputs[2]).files[0].diagnostics.some((d: { message: string }) => d.message.includes('\u001b'))).toBe(true);
  });
});

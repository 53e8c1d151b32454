// The built `qpoint` CLI: output formats, exit codes and bad input, run as a child process.
import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { CLI, ROOT, runCli, scratchFolder } from './harness';

const run = (args: string[], cwd = ROOT) => runCli(args, cwd, 60000);
const scratch = scratchFolder('qpoint-cli-');
const file = scratch.file;

const MIRROR = `NPN mirror with a load
VCC vcc 0 12
R1 vcc ref 11.3k
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 4.7k
.model QN NPN (IS=1e-15 BF=100)
.end
`;

describe('qpoint check', () => {
  it('prints nothing and exits 0 for a clean netlist', () => {
    const r = run(['check', '--no-corners', file('clean.cir', MIRROR)]);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
  });

  it('prints file:line:col severity code message and exits 1 on an error', () => {
    const p = file('bad.cir', 'Bad model\nV1 a 0 5\nR1 a b 1k\nQ1 b b 0 NOSUCH\n.end\n');
    const r = run(['check', p]);
    expect(r.code).toBe(1);
    // Q1's model token is on line 4 (1-based), column 10 (1-based).
    expect(r.stdout).toMatch(new RegExp(`^${p.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}:4:10 error model-not-found `, 'm'));
  });

  it('writes the documented JSON document with zero-based ranges', () => {
    const p = file('bad2.cir', 'Bad model\nV1 a 0 5\nR1 a b 1k\nQ1 b b 0 NOSUCH\n.end\n');
    const r = run(['check', '--format', 'json', p]);
    const doc = JSON.parse(r.stdout);
    expect(doc.version).toBe(4);
    expect(doc.files).toHaveLength(1);
    expect(doc.files[0].path).toBe(p);
    const d = doc.files[0].diagnostics.find((x: { code: string }) => x.code === 'model-not-found');
    expect(d.severity).toBe('error');
    expect(d.range).toEqual({ start: { line: 3, character: 9 }, end: { line: 3, character: 15 } });
    expect(typeof d.message).toBe('string');
  });

  it('adds the operating point and structures to the JSON', () => {
    const r = run(['check', '--format', 'json', '--no-corners', file('m.cir', MIRROR)]);
    const f = JSON.parse(r.stdout).files[0];
    expect(f.operatingPoint.converged).toBe(true);
    expect(f.operatingPoint.devices.Q2.type).toBe('bjt');
    const s = f.structures[0];
    expect(s.kind).toBe('simple-mirror');
    expect(s.reference.device).toBe('Q1');
    expect(s.outputs.map((o: { device: string }) => o.device)).toEqual(['Q2']);
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IOUT = IREF/(1 + 2/β), β = 100 (no Early effect in this model).
    expect(s.estimate.iout.Q2 / s.estimate.iref).toBeCloseTo(1 / 1.02, 6);
    expect(Math.abs(s.solved.iout.Q2 - s.estimate.iout.Q2) / s.estimate.iout.Q2).toBeLessThan(0.005);
  });

  it('summarises each output over the corners by default, lists every corner on request, and writes one line unless --indented', () => {
    const p = file('mc.cir', MIRROR);
    const plain = run(['check', '--format', 'json', p]).stdout;
    const entry = JSON.parse(plain).files[0];
    const summary = entry.structures[0];
    expect(summary.corners).toBeUndefined();
    expect(summary.cornerSummary.corners).toBe(26);
    const all = JSON.parse(run(['check', '--format', 'json', '--all-corners', p]).stdout).files[0].structures[0];
    expect(all.corners).toHaveLength(26);
    // The summary is the extreme of the full list, computed here independently.
    const out = summary.cornerSummary.outputs[0];
    expect(out.device).toBe('Q2');
    const currents = all.corners.map((c: { iout: Record<string, number> }) => c.iout.Q2);
    expect(out.minCurrent.value).toBe(Math.min(...currents));
    expect(out.maxCurrent.value).toBe(Math.max(...currents));
    expect(out.minHeadroom.value).toBe(Math.min(...all.corners.map((c: { headroom: Record<string, number> }) => c.headroom.Q2)));
    const at = all.corners.find((c: { iout: Record<string, number> }) => c.iout.Q2 === out.maxCurrent.value);
    // A summary names its corner by key; the file's corners give each key's label and conditions once.
    expect(out.maxCurrent.corner).toMatch(/^[\x21-\x7e]+$/);
    expect(out.maxCurrent.label).toBeUndefined();
    expect(entry.corners[out.maxCurrent.corner].label).toBe(at.label);
    expect(Object.keys(entry.corners)).toHaveLength(26);
    for (const c of all.corners) {
      const listed = Object.values(entry.corners).find((x) => (x as { label: string }).label === c.label);
      expect(listed).toEqual({ label: c.label, supplyScale: c.supplyScale, temperatureC: c.temperatureC, betaScale: c.betaScale });
    }
    // Source: (common practice) a larger supply gives the resistor-fed reference more current: the maximum is at +5 %.
    expect(entry.corners[out.maxCurrent.corner].label).toMatch(/^supply \+5 %/);
    expect(entry.corners[out.maxCurrent.corner].supplyScale).toBeGreaterThan(1);
    expect(plain.trimEnd().split('\n')).toHaveLength(1);
    const indented = run(['check', '--format', 'json', '--indented', p]).stdout;
    expect(indented.split('\n').length).toBeGreaterThan(100);
    expect(indented).toContain('\n  "tool": "qpoint",\n');
    // Timings ('ms') differ from run to run; everything else must be the same document, and --compact is the default.
    const untimed = (t: string) => JSON.parse(t, (k, v) => (k === 'ms' ? undefined : v));
    expect(untimed(indented)).toEqual(untimed(plain));
    expect(untimed(run(['check', '--format', 'json', '--indented', '--compact', p]).stdout)).toEqual(untimed(plain));
  });

  it('leaves the hand-analysis steps out of the JSON unless --hand-analysis-steps asks for them, and changes nothing else', () => {
    const p = file('steps.cir', MIRROR);
    const untimed = (t: string) => JSON.parse(t, (k, v) => (k === 'ms' ? undefined : v));
    const plain = untimed(run(['check', '--format', 'json', '--no-corners', p]).stdout);
    const detailed = untimed(run(['check', '--format', 'json', '--no-corners', '--hand-analysis-steps', p]).stdout);
    expect(plain.files[0].structures[0].estimate.steps).toBeUndefined();
    const steps: { quantity: string; value: number; substituted: string }[] = detailed.files[0].structures[0].estimate.steps;
    const value = (q: string) => steps.find((x) => x.quantity === q)!.value;
    // Kirchhoff's voltage law round the reference branch: 12 V = IREF · 11.3 kΩ + VBE(Q1).
    expect(value('IREF') * 11.3e3 + value('VBE(Q1)')).toBeCloseTo(12, 9);
    expect(steps.find((x) => x.quantity === 'IREF')!.substituted).toContain('11.3 kΩ');
    for (const s of detailed.files[0].structures) delete s.estimate.steps;
    expect(detailed).toEqual(plain);
  });

  it('keeps only each output\'s three largest spread contributors and no sensitivities in the JSON unless --spread-breakdown asks for them', () => {
    const p = file('spread.cir', MIRROR);
    const untimed = (t: string) => JSON.parse(t, (k, v) => (k === 'ms' ? undefined : v));
    const plain = untimed(run(['check', '--format', 'json', '--no-corners', p]).stdout);
    const detailed = untimed(run(['check', '--format', 'json', '--no-corners', '--spread-breakdown', p]).stdout);
    const short = plain.files[0].structures[0].variation.iout.Q2;
    const full = detailed.files[0].structures[0].variation.iout.Q2;
    expect(short.sensitivities).toBeUndefined();
    // The default keeps the head of the same ranking (the three the hover names), in the same order.
    expect(full.contributors.length).toBeGreaterThan(3);
    expect(short.contributors).toEqual(full.contributors.slice(0, 3));
    // σ is the root of the summed squares of the contributors' σ (independent errors add in quadrature; docs/VARIATION.md).
    const rss = Math.sqrt(full.contributors.reduce((sum: number, c: { sigma: number }) => sum + c.sigma ** 2, 0));
    expect(rss / short.sigma).toBeCloseTo(1, 6);
    // Apart from the breakdown, the two documents are the same.
    for (const doc of [plain, detailed]) {
      for (const o of [...doc.files[0].structures.flatMap((s: { variation: { iref?: object; iout: object } }) => [s.variation.iref, ...Object.values(s.variation.iout)]), ...doc.files[0].variation.outputsOutsideStructures]) {
        if (!o) continue;
        delete (o as { contributors?: unknown }).contributors;
        delete (o as { sensitivities?: unknown }).sensitivities;
      }
    }
    expect(detailed).toEqual(plain);
  });

  it('writes SARIF 2.1.0 with rules and 1-based regions', () => {
    const p = file('bad3.cir', 'Bad model\nV1 a 0 5\nR1 a b 1k\nQ1 b b 0 NOSUCH\n.end\n');
    const sarif = JSON.parse(run(['check', '--format', 'sarif', p]).stdout);
    expect(sarif.version).toBe('2.1.0');
    const run0 = sarif.runs[0];
    expect(run0.tool.driver.name).toBe('qpoint');
    const res = run0.results.find((x: { ruleId: string }) => x.ruleId === 'model-not-found');
    expect(res.level).toBe('error');
    expect(res.locations[0].physicalLocation.region).toMatchObject({ startLine: 4, startColumn: 10 });
    expect(run0.tool.driver.rules.map((x: { id: string }) => x.id)).toContain('model-not-found');
  });

  it('reports an unreadable file as a finding, not a crash, and exits 3 (qpoint failed)', () => {
    const r = run(['check', join(scratch.dir, 'does-not-exist.cir')]);
    expect(r.code).toBe(3);
    expect(r.stdout).toMatch(/error file-unreadable Cannot read/);
  });

  it('prints the usage and exits 0 for --help before or after the command, and for help', () => {
    for (const args of [['--help'], ['-h'], ['help'], ['check', '--help'], ['report', '-h', 'a.cir'], ['sweep', '--output', 'Q2', '--help']]) {
      const r = run(args);
      expect(r.code, args.join(' ')).toBe(0);
      expect(r.stdout, args.join(' ')).toMatch(/^Usage:\n  qpoint check/);
    }
    // After `--` it is a file name, as every option is.
    expect(run(['check', '--', '--help']).stdout).toMatch(/file-unreadable/);
  });

  it('rejects bad command lines with exit 2 and the usage text', () => {
    for (const args of [['frobnicate'], ['check'], ['check', '--format', 'xml', 'a.cir'], ['check', '--temperature', 'hot', 'a.cir'], ['check', '--severity', 'nonsense', 'a.cir']]) {
      const r = run(args);
      expect(r.code, args.join(' ')).toBe(2);
      expect(r.stderr).toMatch(/Usage:/);
    }
  });

  it('applies --severity overrides and --fail-level', () => {
    const p = file('sev.cir', 'Bad model\nV1 a 0 5\nR1 a b 1k\nQ1 b b 0 NOSUCH\n.end\n');
    const off = run(['check', '--severity', 'model-not-found=off', '--format', 'json', p]);
    expect(JSON.parse(off.stdout).files[0].diagnostics.some((d: { code: string }) => d.code === 'model-not-found')).toBe(false);
    const warn = run(['check', '--severity', 'model-not-found=warning', '--format', 'json', p]);
    const d = JSON.parse(warn.stdout).files[0].diagnostics.find((x: { code: string }) => x.code === 'model-not-found');
    expect(d.severity).toBe('warning');
  });

  it('survives binary junk', () => {
    // Control bytes and a lone surrogate, but no NUL (a NUL makes the file binary, which is refused unread).
    const p = file('junk.cir', '\u0002\u0001\uD800garbage {{{ \n+ + +\n.subckt\n');
    const r = run(['check', p]);
    expect([0, 1]).toContain(r.code);
    expect(r.stderr).toBe('');
  });
});

describe('resistor suggestions in the machine-readable output', () => {
  // Source: IREF = (V+ − V− − VBE)/R and IOUT = IREF/(1 + 2/β) (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4):
  // 12 V, β = 100, IS = 1e-15 A and a 1 mA target need R ≈ (12 − 0.69) V/(1.02 mA) ≈ 11.1 kΩ.
  const TARGET = `Target miss
VCC vcc 0 12
R1 vcc ref 22k
Q1 ref ref 0 QN
Q2 out ref 0 QN ; expect 1mA ±5%
RL vcc out 4.7k
.model QN NPN (IS=1e-15 BF=100)
.end
`;

  it('carries the standard-value fixes in JSON, with the edit on the resistor value', () => {
    const p = file('target.cir', TARGET);
    const d = JSON.parse(run(['check', '--no-corners', '--format', 'json', p]).stdout).files[0].diagnostics.find((x: { code: string }) => x.code === 'target-missed');
    expect(d.fixes.length).toBeGreaterThanOrEqual(2);
    const values = d.fixes.map((f: { edits: { newText: string }[] }) => f.edits[0].newText);
    // IEC 60063 E24 neighbours of about 11.1 kΩ.
    expect(values).toContain('11k');
    expect(values).toContain('12k');
    // The edit replaces exactly the text `22k` on line 3 (zero-based line 2, characters 11–14).
    expect(d.fixes[0].edits[0].range).toEqual({ start: { line: 2, character: 11 }, end: { line: 2, character: 14 } });
  });

  it('carries them in SARIF as fixes with replacements', () => {
    const p = file('target2.cir', TARGET);
    const res = JSON.parse(run(['check', '--no-corners', '--format', 'sarif', p]).stdout).runs[0].results.find((x: { ruleId: string }) => x.ruleId === 'target-missed');
    const rep = res.fixes[0].artifactChanges[0].replacements[0];
    expect(rep.deletedRegion).toMatchObject({ startLine: 3, startColumn: 12, endColumn: 15 });
    expect(rep.insertedContent.text).toMatch(/^1[12]k$/);
  });
});

describe('qpoint report', () => {
  it('prints structures, currents and the caution for the bundled example', () => {
    const r = run(['report', 'examples/sensor-bias.cir']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/IREF/);
    expect(r.stdout).toMatch(/Caution: .*local codes and licensed practice/);
  });

  it('writes the JSON document with --format json, power per device included, and refuses SARIF with exit 2', () => {
    const r = run(['report', '--format', 'json', '--no-corners', file('report.cir', MIRROR)]);
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.caution).toMatch(/licensed practice/);
    const power = doc.files[0].power;
    // Source: Joule's law — RL dissipates I²·R with the current the operating point gives it.
    const rl = doc.files[0].operatingPoint.devices.RL;
    expect(power.RL.watts).toBeCloseTo(rl.current * rl.current * 4.7e3, 12);
    expect(power.RL).toMatchObject({ limitW: 0.25, limitFrom: 'setting' });
    const sarif = run(['report', '--format', 'sarif', 'examples/sensor-bias.cir']);
    expect(sarif.code).toBe(2);
    expect(sarif.stderr).toMatch(/check --format sarif/);
  });

  it('takes the power limits from the command line', () => {
    const p = file('hot.cir', 'Hot resistor\nV1 a 0 12\nR1 a 0 330\n.end\n');
    expect(run(['check', '--no-corners', p]).stdout).toMatch(/power-over-rating R1 dissipates 436 mW/);
    expect(run(['check', '--no-corners', '--resistor-power-limit', '0.5', p]).stdout).toBe('');
    expect(run(['check', '--resistor-power-limit', '-1', p]).code).toBe(2);
  });

  it('ends quietly when the reader closes the pipe early', () => {
    // A JSON document far larger than a pipe's buffer, into a reader that stops after one byte: no stack trace, no EPIPE.
    const lines = ['Two hundred mirrors', 'VCC vcc 0 5'];
    for (let i = 0; i < 200; i++) lines.push(`R${i} vcc a${i} 4.3k`, `QA${i} a${i} a${i} 0 QN`, `QB${i} o${i} a${i} 0 QN`, `RL${i} vcc o${i} 1k`);
    const p = file('many.cir', [...lines, '.model QN npn (BF=100)', '.end', ''].join('\n'));
    const r = spawnSync('sh', ['-c', `"${process.execPath}" "${CLI}" check --format json --no-corners "${p}" | head -c 1 >/dev/null`], { cwd: ROOT, encoding: 'utf8', timeout: 60000 });
    expect(r.status).toBe(0);
    expect(r.stderr).toBe('');
  });

  it('writes into a pipe as into a file: nothing left queued in the process after a write, the same document', () => {
    // A JSON document of about 800 KB, in chunks larger than a pipe's 64 KiB buffer, read by this process through a
    // pipe. Node's queue of what the reader has not taken yet (`writableLength`) is read after
    // every write to the standard output; a queued chunk would be held in memory until the run ends (before: 825,292 bytes queued
    // at the last write).
    const lines = ['Four hundred mirrors', 'VCC vcc 0 5'];
    for (let i = 0; i < 400; i++) lines.push(`R${i} vcc a${i} 4.3k`, `QA${i} a${i} a${i} 0 QN`, `QB${i} o${i} a${i} 0 QN`, `RL${i} vcc o${i} 1k`);
    const p = file('queued.cir', [...lines, '.model QN npn (BF=100)', '.end', ''].join('\n'));
    const watch = file(
      'watch-queue.cjs',
      [
        "let most = 0, writes = 0, bytes = 0;",
        "const write = process.stdout.write.bind(process.stdout);",
        "process.stdout.write = (chunk, ...rest) => { const ok = write(chunk, ...rest); writes++; bytes += chunk.length; most = Math.max(most, process.stdout.writableLength); return ok; };",
        "process.on('exit', () => require('fs').writeSync(2, JSON.stringify({ most, writes, bytes })));",
      ].join('\n'),
    );
    const args = ['-r', watch, CLI, 'check', '--format', 'json', '--no-corners', p];
    const piped = spawnSync(process.execPath, args, { cwd: ROOT, encoding: 'utf8', timeout: 60000, maxBuffer: 1 << 28 });
    const seen = JSON.parse(piped.stderr) as { most: number; writes: number; bytes: number };
    expect(seen.bytes).toBeGreaterThan(1 << 19);
    expect(seen.writes).toBeGreaterThan(1);
    expect(seen.most).toBe(0);
    const out = join(scratch.dir, 'queued.json');
    const filed = spawnSync('sh', ['-c', `"${process.execPath}" "${CLI}" check --format json --no-corners "${p}" > "${out}"`], { cwd: ROOT, timeout: 60000 });
    expect(piped.status).toBe(filed.status);
    const masked = (text: string): string => text.replace(/"ms":\d+(\.\d+)?/g, '"ms":0');
    expect(masked(piped.stdout)).toBe(masked(readFileSync(out, 'utf8')));
  });
});

describe('include search and decoding from the command line', () => {
  it('finds an include in a --search-folder, with other letter case, and reads a Windows-1252 µ', () => {
    const kit = mkdtempSync(join(tmpdir(), 'qpoint-kit-'));
    writeFileSync(join(kit, 'Mirror.LIB'), '.model QN NPN (IS=1e-15 BF=100)\n');
    // 0xB5 is µ in Windows-1252 (and Latin-1), not valid UTF-8 on its own.
    const bench = Buffer.concat([Buffer.from('Mirror from a kit\n.include mirror.lib\nVCC vcc 0 12\nR1 vcc ref 11.3k\nC1 ref 0 1'), Buffer.from([0xb5]), Buffer.from('\nQ1 ref ref 0 QN\nQ2 out ref 0 QN\nRL vcc out 4.7k\n.end\n')]);
    const p = join(scratch.dir, 'kit-bench.cir');
    writeFileSync(p, bench);
    const without = run(['check', '--no-corners', p]);
    expect(without.stdout).toMatch(/include-not-found/);
    const r = run(['check', '--no-corners', '--format', 'json', '--search-folder', kit, p]);
    const doc = JSON.parse(r.stdout);
    expect(doc.files[0].diagnostics.map((d: { code: string }) => d.code)).toEqual([]);
    expect(r.code).toBe(0);
  });
});

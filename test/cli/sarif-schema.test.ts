// `qpoint check --format sarif` validated against the SARIF 2.1.0 JSON schema (OASIS), with Ajv, a general-purpose schema validator.
import { describe, expect, it } from 'vitest';
import { writeFileSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import Ajv from 'ajv-draft-04';
import { ROOT, runCli, scratchFolder } from './harness';

// The standard's schema, committed with its source noted in test/fixtures/sarif/SOURCE.md.
const SCHEMA = JSON.parse(readFileSync(join(ROOT, 'test/fixtures/sarif/sarif-2.1.0-rtm.5.json'), 'utf8'));

const run = (args: string[]) => runCli(args);
const scratch = scratchFolder('qpoint-sarif-');

function validate(log: unknown): string[] {
  // The schema's `language` pattern has a stray `]` that a Unicode-mode RegExp refuses; draft-04 patterns are
  // ECMA-262 regular expressions without the u flag, so Ajv compiles them that way (unicodeRegExp: false).
  const ajv = new Ajv({ allErrors: true, strict: false, unicodeRegExp: false });
  const ok = ajv.validate(SCHEMA, log);
  return ok ? [] : (ajv.errors ?? []).map((e) => `${e.instancePath} ${e.message}`);
}

describe('SARIF output against the SARIF 2.1.0 schema', () => {
  it('validates for the bundled example, with findings, fixes and related rules', () => {
    const r = run(['check', '--format', 'sarif', 'examples/sensor-bias.cir']);
    const log = JSON.parse(r.stdout);
    expect(log.runs[0].results.length).toBeGreaterThan(0);
    expect(log.runs[0].results.some((x: { fixes?: unknown[] }) => x.fixes?.length)).toBe(true);
    expect(validate(log)).toEqual([]);
  });

  it('validates for an unreadable file, a netlist with no findings, and several files at once', () => {
    const clean = join(scratch.dir, 'clean.cir');
    writeFileSync(clean, 'Divider\nV1 a 0 10\nR1 a b 1k\nR2 b 0 1k\n.end\n');
    const broken = join(scratch.dir, 'broken.cir');
    writeFileSync(broken, 'Broken\nQ1 c b e NOSUCH\nR1 c 0 4k7\n.bogus\n.end\n');
    for (const args of [[clean], [join(scratch.dir, 'missing.cir')], [clean, broken, 'examples/sensor-bias.cir']]) {
      const log = JSON.parse(run(['check', '--format', 'sarif', ...args]).stdout);
      expect(validate(log), args.join(' ')).toEqual([]);
    }
  });

  it('is a validator that can fail: a log with a misspelt level or no message is refused', () => {
    const log = JSON.parse(run(['check', '--format', 'sarif', 'examples/sensor-bias.cir']).stdout);
    const bad = structuredClone(log);
    bad.runs[0].results[0].level = 'severe';
    expect(validate(bad).join('\n')).toMatch(/level/);
    const noMessage = structuredClone(log);
    delete noMessage.runs[0].results[0].message;
    expect(validate(noMessage).length).toBeGreaterThan(0);
  });
});

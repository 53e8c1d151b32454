// The structure catalogue itself: the registry's order, and that every kind has its module, registry entry, tests and README row.

import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { capitalised, kindName, KINDS, kindOf, outputKindName, referenceJunctions } from '../../../shared-analysis/src/structures/catalogue';
import { withKindsTable } from '../../../scripts/finding-codes';

const ROOT = join(__dirname, '../../..');
const MODULES = join(ROOT, 'shared-analysis/src/structures/kinds');
const TESTS = join(__dirname, 'kinds');
/** Files in `kinds/` that hold shared hook code, not a kind. */
const SHARED = ['common.ts'];

describe('structure catalogue', () => {
  it('tries the kinds most specific first', () => {
    // The wide-swing cascode's bias device would otherwise be a lone diode; a stacked mirror contains a simple mirror's lower pair; the improved Wilson contains the Wilson's
    // devices plus one; a bandgap core is a ΔVBE cell with an output branch; the ΔVBE cell and the
    // beta multiplier are Widlar pairs whose output returns to their reference; a degenerated mirror's
    // outputs look like Widlar outputs of a reference on X1; a Widlar source is a simple mirror whose
    // every output is degenerated; a diode-referenced source's string of diode-connected devices would
    // otherwise leave its lower device as a lone diode. The JFET self-biased source shares no device with a
    // mirror (it is tried only on JFETs), so its place among the single-device sources is free.
    expect(KINDS.map((k) => k.id)).toEqual([
      'wide-swing-cascode',
      'cascode-mirror',
      'improved-wilson-mirror',
      'wilson-mirror',
      'helper-mirror',
      'vbe-multiplier',
      'bandgap-core',
      'ptat-cell',
      'beta-multiplier',
      'degenerated-mirror',
      'widlar-source',
      'diode-referenced-source',
      'regulated-source',
      'jfet-self-biased-source',
      'simple-mirror',
    ]);
  });

  it('has one module per kind, named after it, and no module outside the registry', () => {
    const files = readdirSync(MODULES).filter((f) => f.endsWith('.ts') && !SHARED.includes(f));
    expect(files.map((f) => f.replace(/\.ts$/, '')).sort()).toEqual(KINDS.map((k) => k.id).sort());
    for (const k of KINDS) {
      const text = readFileSync(join(MODULES, `${k.id}.ts`), 'utf8');
      expect(text, `${k.id}.ts declares its id`).toContain(`id: '${k.id}'`);
    }
  });

  it('has a table-driven test file per kind', () => {
    const files = readdirSync(TESTS).filter((f) => f.endsWith('.test.ts'));
    expect(files.map((f) => f.replace(/\.test\.ts$/, '')).sort()).toEqual(KINDS.map((k) => k.id).sort());
    for (const k of KINDS) {
      const text = readFileSync(join(TESTS, `${k.id}.test.ts`), 'utf8');
      expect(text).toContain(`kind: '${k.id}'`);
      expect(text).toMatch(/matches:/);
      expect(text).toMatch(/rejects:/);
    }
  });

  it('has a README row per kind (run `npm run docs:codes` to refresh)', () => {
    const readme = readFileSync(join(ROOT, 'README.md'), 'utf8');
    expect(readme).toBe(withKindsTable(readme));
    for (const k of KINDS) expect(readme).toContain(`| \`${k.id}\` | ${k.name} |`);
  });

  it('gives every kind one distinct name, an output name, a summary and its technologies', () => {
    const names = KINDS.map((k) => k.name);
    expect(new Set(names).size).toBe(names.length);
    for (const k of KINDS) {
      expect(k.name.length).toBeGreaterThan(5);
      expect(k.outputName).toMatch(/output/);
      expect(k.summary.length).toBeGreaterThan(20);
      expect(k.technologies.length).toBeGreaterThan(0);
      expect(k.referenceJunctions).toBeGreaterThanOrEqual(1);
      expect(kindOf(k.id)).toBe(k);
    }
  });

  it('names kinds and outputs in words', () => {
    expect(capitalised(kindName('simple-mirror'))).toBe('Simple current mirror');
    expect(kindName('widlar-source')).toBe('Widlar current source');
    // A degenerated output of a simple mirror is a Widlar output, never a "mirror output".
    const s = { kind: 'simple-mirror' as const, outputs: [{ device: 'Q2', node: 'o', ratio: 1 }, { device: 'Q3', node: 'p', ratio: 1, degeneration: { resistor: 'RE', ohms: 1e3 } }] };
    expect(outputKindName(s, 'Q2')).toBe('mirror output');
    expect(outputKindName(s, 'q3')).toBe('Widlar output');
  });

  it('counts the reference chain\'s junctions in one place', () => {
    // Source: the topologies in each kind's module — one VBE for a diode-connected reference on the rail, two for stacks and the helper.
    expect(referenceJunctions({ kind: 'simple-mirror' })).toBe(1);
    expect(referenceJunctions({ kind: 'helper-mirror' })).toBe(2);
    expect(referenceJunctions({ kind: 'cascode-mirror' })).toBe(2);
  });
});

// Include search as designers' netlists expect it, the one summary for an unread include, and flood control.
//
// Path conventions (backslash separators from Windows tools, case-insensitive file systems, kit
// folders, absolute paths copied from another machine) are common practice, from memory. The
// flood limit of 50 findings per code per file is qpoint's own rule (README, "Finding codes").

import { describe, expect, it } from 'vitest';
import { analyse, MAX_FINDINGS_PER_CODE } from '../../../shared-analysis/src/service';
import type { Analysis, AnalysisOptions } from '../../../shared-analysis/src/analysis';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { hoverAt } from '../../../shared-analysis/src/features/hover';

const ROOT = '/w/top.cir';
const BJT_LIB = '* kit models\n.model QKIT NPN (IS=2e-15 BF=120 VAF=70)\n';
const BENCH = (include: string) => `bench\n${include}\nVCC vcc 0 5\nR1 vcc b 430k\nQ1 c b 0 QKIT\nRC vcc c 2k\n`;

function run(text: string, files: Record<string, string>, options: AnalysisOptions = {}): Analysis {
  return analyse({ uri: ROOT, text }, new MemoryWorkspace({ ...files, [ROOT]: text }), { corners: { enabled: false }, ...options });
}

const codes = (a: Analysis): string[] => a.findings.map((f) => f.code);

/** The include's symbol and hover, for a bench whose model comes from the include. */
function found(a: Analysis): { target: string; how?: string; hover?: string } {
  const inc = a.symbols.includes[0]!;
  const h = hoverAt(a, ROOT, inc.span.start + 1);
  return { target: inc.target, how: inc.how, hover: h?.markdown };
}

describe('include search', () => {
  it('reads backslashes as folder separators', () => {
    const a = run(BENCH('.include models\\bjt.lib'), { '/w/models/bjt.lib': BJT_LIB });
    expect(codes(a)).toEqual([]);
    expect(found(a)).toMatchObject({ target: '/w/models/bjt.lib', how: undefined, hover: 'Reads `/w/models/bjt.lib`.' });
  });

  it('retries a path with other letter case', () => {
    const a = run(BENCH('.include "Models/BJT.LIB"'), { '/w/models/bjt.lib': BJT_LIB });
    expect(codes(a)).toEqual([]);
    expect(found(a)).toMatchObject({ target: '/w/models/bjt.lib', how: 'letter-case' });
    expect(found(a).hover).toMatch(/other letter case/);
  });

  it('looks in the search folders after the including file`s folder, in order', () => {
    const files = { '/kit/a/bjt.lib': BJT_LIB, '/kit/b/bjt.lib': BJT_LIB.replace('BF=120', 'BF=50') };
    const a = run(BENCH('.inc bjt.lib'), files, { includeFolders: ['/kit/a', '/kit/b'] });
    expect(codes(a)).toEqual([]);
    expect(found(a)).toMatchObject({ target: '/kit/a/bjt.lib', how: 'search-folder' });
    // The file beside the netlist wins over the search folders.
    const b = run(BENCH('.inc bjt.lib'), { ...files, '/w/bjt.lib': BJT_LIB }, { includeFolders: ['/kit/a'] });
    expect(found(b).target).toBe('/w/bjt.lib');
  });

  it('looks up an absolute path that does not exist by its tail', () => {
    const a = run(BENCH('.lib "C:\\Kits\\acme\\models\\bjt.lib" tt'), { '/kit/models/bjt.lib': '.lib tt\n' + BJT_LIB + '.endl tt\n' }, { includeFolders: ['/kit'] });
    expect(codes(a)).toEqual([]);
    expect(found(a)).toMatchObject({ target: '/kit/models/bjt.lib', how: 'path-tail' });
  });
});

describe('an unread include', () => {
  const bench = 'bench\n.include kit/models.lib\nVCC vcc 0 5\nQ1 c b 0 QKIT\nQ2 c2 b 0 QKIT\nQ3 c3 b 0 QKITP\nX1 vcc c amp\nR1 vcc b {rbias}\nR2 c 0 1k\nR3 c2 0 1k\nR4 c3 0 1k\n';

  it('is one error on its card with the folders searched, and one summary of what may come from it', () => {
    const a = run(bench, {}, { includeFolders: ['/kit'] });
    expect(codes(a).filter((c) => a.findings.find((f) => f.code === c)!.severity === 'error')).toEqual(['include-not-found']);
    const notFound = a.findings.find((f) => f.code === 'include-not-found')!;
    expect(notFound.data?.['searched']).toEqual(['/w/kit/', '/kit/']);
    expect(notFound.message).toMatch(/also looked in `\/kit\/`/);
    const summary = a.findings.filter((f) => f.code === 'include-missing-consequences');
    expect(summary).toHaveLength(1);
    expect(summary[0]!.span).toEqual(notFound.span);
    expect(summary[0]!.data).toMatchObject({ devices: 5, names: ['QKIT', 'QKITP', 'amp', 'rbias'] });
    expect(summary[0]!.message).toMatch(/^5 devices use names that may come from the unread file `kit\/models.lib`/);
    // No per-device errors, so no "add a default .model" fix either.
    expect(codes(a)).not.toContain('model-not-found');
    expect(codes(a)).not.toContain('subckt-not-found');
    expect(a.findings.some((f) => (f.fixes ?? []).length > 0)).toBe(false);
  });
});

describe('model libraries', () => {
  const library = Array.from({ length: 30 }, (_, i) => `.model Q${i} NPN (IS=1e-15 BF=${i === 7 ? -5 : 100} FOO=1)`).join('\n') + '\n';

  it('raise nothing for their unused models, and the findings of a used one', () => {
    const a = run('bench\n.include lib.mod\nV1 b 0 0.7\nV2 c 0 5\nQ1 c b 0 Q7\n', { '/w/lib.mod': library });
    expect(codes(a).sort()).toEqual(['model-parameter-invalid', 'model-unknown-parameter']);
    expect(a.findings.every((f) => f.uri === '/w/lib.mod')).toBe(true);
  });

  it('gives a process-kit model one finding for its level and one listing its other parameters', () => {
    const params = Array.from({ length: 120 }, (_, i) => `p${i}=${i}`).join(' ');
    const a = run(`bench\n.model NCH NMOS (LEVEL=54 VTH0=0.4 ${params})\nV1 g 0 1\nV2 d 0 1\nM1 d g 0 0 NCH W=1u L=1u\n`, {});
    expect(codes(a).sort()).toEqual(['model-level-approximated', 'model-parameter-ignored']);
    const ignored = a.findings.find((f) => f.code === 'model-parameter-ignored')!;
    // VTH0 is mapped to VTO (docs/DEVICE-MODELS.md); the 120 others are listed as unused.
    expect((ignored.data?.['parameters'] as string[]).length).toBe(120);
  });

  it('lists many unknown parameters of a card in one finding and a few one by one', () => {
    const many = run('m\n.model QN NPN (AA=1 BB=2 CC=3 DD=4 IS=1e-15)\n', {});
    expect(codes(many)).toEqual(['model-unknown-parameter']);
    expect(many.findings[0]!.data?.['parameters']).toEqual(['AA', 'BB', 'CC', 'DD']);
    const few = run('m\n.model QN NPN (AA=1 BB=2)\n', {});
    expect(codes(few)).toEqual(['model-unknown-parameter', 'model-unknown-parameter']);
  });

  it('reads the family`s other spellings of model parameters, with one note per model', () => {
    const a = run('m\n.model QN NPN (IS=1e-15 BF=100 VA=60 IK=10m VB=20)\n', {});
    // IKF and VAR are Gummel–Poon parameters the DC equations use (docs/DEVICE-MODELS.md): only the alias note.
    expect(codes(a).sort()).toEqual(['model-parameter-alias']);
    expect(a.findings.find((f) => f.code === 'model-parameter-alias')!.message).toMatch(/VA as VAF, IK as IKF, VB as VAR/);
    expect(a.circuit!.models['qn']!.params['VAF']).toBe(60);
    expect(a.circuit!.models['qn']!.params['IKF']).toBe(10e-3);
    expect(a.circuit!.models['qn']!.params['VAR']).toBe(20);
  });
});

describe('flood control', () => {
  it('lists a code 50 times per file and counts the rest in one finding', () => {
    const lines = Array.from({ length: 130 }, (_, i) => `R${i} n${i} 0 4k7`).join('\n');
    const a = run(`flood\nV1 n0 0 1\n${lines}\n`, {});
    const invalid = a.findings.filter((f) => f.code === 'element-value-invalid');
    expect(invalid).toHaveLength(MAX_FINDINGS_PER_CODE);
    const capped = a.findings.filter((f) => f.code === 'findings-capped');
    expect(capped).toHaveLength(1);
    expect(capped[0]!.data).toEqual({ code: 'element-value-invalid', total: 130, shown: 50, hidden: 80 });
    expect(capped[0]!.message).toBe('`element-value-invalid` is raised 130 times in this file; the first 50 are listed and the other 80 are not.');
    // Survives JSON as the CLI writes it.
    expect(JSON.parse(JSON.stringify(capped[0]))).toEqual(capped[0]);
    expect(a.findings.length).toBeLessThan(MAX_FINDINGS_PER_CODE * 4);
  });
});

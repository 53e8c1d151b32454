// The dialect corpus: realistic netlists of our own writing under test/fixtures/dialect/, one per
// construct, each analysed from its bytes on disk (as the CLI and the server read them) and
// compared with its `.expected.json`.
//
// Each expectation file says why (`why`) and lists:
//   findings   exactly these (code, 1-based line) in the netlist itself, as a multiset;
//   counts     instead of `findings`: how many findings of each code;
//   capped     the `data` of the one `findings-capped` finding;
//   nodes      node voltages computed by hand (the `why` gives the formula), within 1e-6 V;
//   between    node voltages that must lie in a range (facts of the trade, given in `why`);
//   current    device currents by hand, within 1e-6 relative;
//   structures the number of recognised bias structures;
//   sections   the library sections the outline lists;
//   includes   the included files read, relative to the corpus folder;
//   title, tnom the circuit's title and nominal temperature.

import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync, existsSync } from 'node:fs';
import * as path from 'node:path';
import { analyse } from '../../shared-analysis/src/service';
import { decodeNetlistText } from '../../shared-analysis/src/syntax/decode';
import { LineIndex } from '../../shared-analysis/src/syntax/line-index';
import { documentSymbols } from '../../shared-analysis/src/features/symbols';
import type { Workspace } from '../../shared-analysis/src/types';

const CORPUS = path.join(__dirname, '../fixtures/dialect');

/** Reads the corpus folder's files through the one decoding every host uses. */
class CorpusWorkspace implements Workspace {
  read(uri: string): string | undefined {
    try {
      return decodeNetlistText(readFileSync(uri));
    } catch {
      return undefined;
    }
  }
  resolve(fromUri: string, ref: string): string {
    return path.resolve(path.dirname(fromUri), ref);
  }
  list(folder: string): readonly string[] | undefined {
    try {
      return readdirSync(folder);
    } catch {
      return undefined;
    }
  }
}

interface Expected {
  why: string;
  findings?: { code: string; line: number }[];
  counts?: Record<string, number>;
  capped?: Record<string, unknown>;
  nodes?: Record<string, number>;
  between?: Record<string, [number, number]>;
  current?: Record<string, number>;
  structures?: number;
  sections?: string[];
  includes?: string[];
  title?: string;
  tnom?: number;
}

const cases = readdirSync(CORPUS)
  .filter((f) => f.endsWith('.expected.json'))
  .map((f) => f.replace(/\.expected\.json$/, ''))
  .sort();

describe('dialect corpus', () => {
  it('has a netlist for every expectation and enough cases', () => {
    expect(cases.length).toBeGreaterThanOrEqual(25);
  });

  for (const name of cases) {
    const expected = JSON.parse(readFileSync(path.join(CORPUS, `${name}.expected.json`), 'utf8')) as Expected;
    const file = readdirSync(CORPUS).find((f) => f.startsWith(`${name}.`) && !f.endsWith('.json'));
    it(`${name}: ${expected.why}`, () => {
      expect(file, name).toBeDefined();
      const uri = path.join(CORPUS, file!);
      expect(existsSync(uri)).toBe(true);
      const ws = new CorpusWorkspace();
      const text = ws.read(uri)!;
      const a = analyse({ uri, text }, ws, { corners: { enabled: false } });
      const lines = new LineIndex(text);
      const own = a.findings.filter((f) => f.uri === uri).map((f) => ({ code: f.code, line: lines.positionAt(f.span.start).line + 1 }));
      const shown = JSON.stringify(a.findings.map((f) => `${f.code} ${f.uri === uri ? 'line ' + (lines.positionAt(f.span.start).line + 1) : f.uri}: ${f.message}`), null, 1);
      const order = (x: { code: string; line: number }, y: { code: string; line: number }) => x.line - y.line || x.code.localeCompare(y.code);
      if (expected.findings) {
        expect([...own].sort(order), shown).toEqual([...expected.findings].sort(order));
        // Nothing from included files either, beyond what is listed.
        expect(a.findings.filter((f) => f.uri !== uri), shown).toEqual([]);
      }
      if (expected.counts) {
        for (const [code, n] of Object.entries(expected.counts)) expect(a.findings.filter((f) => f.code === code).length, code).toBe(n);
      }
      if (expected.capped) expect(a.findings.find((f) => f.code === 'findings-capped')?.data).toEqual(expected.capped);
      for (const [node, volts] of Object.entries(expected.nodes ?? {})) {
        expect(a.operatingPoint?.nodes[node], `${node}\n${shown}`).toBeDefined();
        expect(Math.abs(a.operatingPoint!.nodes[node]! - volts), node).toBeLessThan(1e-6);
      }
      for (const [node, [lo, hi]] of Object.entries(expected.between ?? {})) {
        const v = a.operatingPoint?.nodes[node];
        expect(v, node).toBeGreaterThan(lo);
        expect(v, node).toBeLessThan(hi);
      }
      for (const [device, amps] of Object.entries(expected.current ?? {})) {
        const d = a.operatingPoint?.devices[device] as { id?: number; current?: number } | undefined;
        const i = d?.id ?? d?.current;
        expect(i, device).toBeDefined();
        expect(Math.abs(Math.abs(i!) - amps) / amps, device).toBeLessThan(1e-6);
      }
      if (expected.structures !== undefined) expect(a.structures.length).toBe(expected.structures);
      if (expected.sections) {
        expect(documentSymbols(a, uri).filter((s) => s.kind === 'section').map((s) => s.name)).toEqual(expected.sections);
      }
      if (expected.includes) {
        expect(a.symbols.includes.filter((i) => i.found).map((i) => path.relative(CORPUS, i.target).split(path.sep).join('/'))).toEqual(expected.includes);
      }
      if (expected.title !== undefined) expect(a.circuit?.title).toBe(expected.title);
      if (expected.tnom !== undefined) expect(a.circuit?.tnomC).toBe(expected.tnom);
    });
  }
});

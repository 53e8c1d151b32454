// docs/PROTOCOL.md stays true: every custom request and command the server has is described there, and every field
// the built server actually answers with is named in the section of its request.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ExecuteCommandRequest } from 'vscode-languageserver-protocol/node';
import { startServer, type ServerSession } from './lsp-client';

const ROOT = join(__dirname, '../..');
const DOC = readFileSync(join(ROOT, 'docs', 'PROTOCOL.md'), 'utf8');
const PROTOCOL_TS = readFileSync(join(ROOT, 'server', 'src', 'protocol.ts'), 'utf8');

/** The text of the section whose heading names `name` (up to the next heading of the same or a higher level). */
function section(name: string): string {
  const lines = DOC.split('\n');
  const start = lines.findIndex((l) => /^#{2,4} /.test(l) && l.includes(name));
  if (start < 0) return '';
  const level = /^#+/.exec(lines[start]!)![0].length;
  const end = lines.findIndex((l, i) => i > start && /^#+ /.test(l) && /^#+/.exec(l)![0].length <= level);
  return lines.slice(start, end < 0 ? undefined : end).join('\n');
}

/** Every key of an answer, nested objects and the first element of arrays included. */
function keysOf(value: unknown, out = new Set<string>()): Set<string> {
  if (Array.isArray(value)) {
    if (value.length) keysOf(value[0], out);
  } else if (value && typeof value === 'object') {
    for (const [k, v] of Object.entries(value)) {
      out.add(k);
      // An LSP WorkspaceEdit is the protocol's own type, described by the LSP specification.
      if (k !== 'edit') keysOf(v, out);
    }
  }
  return out;
}

/** The one helper: every key of `answer` is named (in backticks or quotes) in the section about `name`. */
function check(name: string, answer: unknown): void {
  const text = section(name);
  expect(text, `docs/PROTOCOL.md has a section on ${name}`).not.toBe('');
  for (const k of keysOf(answer)) expect(text, `the section on ${name} names the field ${k}`).toMatch(new RegExp(`["\`]${k}["\`?]`));
}

let s: ServerSession;
const uri = 'file:///protocol-doc.cir';

beforeAll(async () => {
  s = await startServer({ settings: { analysisDelayMs: 0 }, capabilities: { workspace: { applyEdit: true } } });
  s.connection.onRequest('workspace/applyEdit', () => ({ applied: true }));
  // A simple NPN mirror: one output to list, sweep and size for.
  s.open(uri, 'Mirror\nVCC vcc 0 DC 5\nR1 vcc b 6.8k\nQ1 b b 0 qn\nQ2 out b 0 qn\nRL vcc out 2k\n.model qn npn (IS=1e-16 BF=100)\n.end\n');
  await s.waitFor('diagnostics', () => s.diagnostics.get(uri));
});

afterAll(async () => {
  expect(await s?.stop()).toBe(0);
});

describe('docs/PROTOCOL.md', () => {
  it('describes every custom request and command name the server and client share', () => {
    const names = [...PROTOCOL_TS.matchAll(/export const \w+ = '([^']+)'/g)].map((m) => m[1]!);
    expect(names.length).toBeGreaterThanOrEqual(6);
    for (const name of names) expect(DOC, `docs/PROTOCOL.md mentions ${name}`).toContain(`\`${name}\``);
    for (const command of s.initializeResult?.capabilities.executeCommandProvider?.commands ?? []) expect(DOC).toContain(`\`${command}\``);
  });

  it('names every field the server answers the custom requests and commands with', async () => {
    check('qpoint/listOutputs', await s.connection.sendRequest('qpoint/listOutputs', { uri }));
    check('qpoint/outputCharacteristic', await s.connection.sendRequest('qpoint/outputCharacteristic', { uri, device: 'Q2', points: 5 }));
    check('qpoint/sizeResistor', await s.connection.sendRequest('qpoint/sizeResistor', { uri, resistor: 'R1', target: '1m' }));
    check('qpoint/monteCarlo', await s.connection.sendRequest('qpoint/monteCarlo', { uri, seed: 1, first: 0, count: 4, finish: true }));
    check('Commands the server runs', await s.connection.sendRequest(ExecuteCommandRequest.type, { command: 'qpoint.server.reanalyse', arguments: [] }));
    check('Commands the server runs', await s.connection.sendRequest(ExecuteCommandRequest.type, { command: 'qpoint.server.sizeResistor', arguments: [{ uri, resistor: 'R1', target: '1m' }] }));
  });

  it('names every setting of package.json in the settings shape it describes (through the README table it points to)', () => {
    const pkg = JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8'));
    const readme = readFileSync(join(ROOT, 'README.md'), 'utf8');
    expect(section('Settings')).toContain("README's settings table");
    const rows = readme.split('\n').filter((l) => l.startsWith('| `qpoint.'));
    for (const key of Object.keys(pkg.contributes.configuration.properties)) {
      const parent = key.split('.').slice(0, -1).join('.');
      const last = key.split('.').at(-1)!;
      // The table abbreviates siblings (`qpoint.corners.coldCelsius` / `hotCelsius`): a row of the parent with the last part suffices.
      expect(rows.some((r) => r.includes(`\`${key}\``) || (r.includes(`\`${parent}.`) && r.includes(`\`${last}\``))), `README's settings table lists ${key}`).toBe(true);
    }
  });
});

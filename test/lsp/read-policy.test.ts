// What the language server reads for an open netlist: the shared reading policy, and nothing from disk in an untrusted workspace.
import { afterEach, describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { pathToFileURL } from 'node:url';
import { startServer, type ServerSession } from './lsp-client';

let session: ServerSession | undefined;
afterEach(async () => {
  await session?.stop();
  session = undefined;
});

/** A folder with `net.cir` including `target`, and what is beside it. */
function project(target: string, beside: Record<string, string> = {}): { uri: string; folder: string } {
  const folder = mkdtempSync(join(tmpdir(), 'qpoint-policy-'));
  for (const [name, text] of Object.entries(beside)) {
    mkdirSync(join(folder, name, '..'), { recursive: true });
    writeFileSync(join(folder, name), text);
  }
  const file = join(folder, 'net.cir');
  writeFileSync(file, `Policy\nV1 a 0 5\nR1 a 0 1k\n.include ${target}\n.end\n`);
  return { uri: pathToFileURL(file).href, folder };
}

async function includeMessage(s: ServerSession, uri: string, text: string): Promise<string | undefined> {
  s.open(uri, text);
  const diags = await s.waitFor('diagnostics', () => s.diagnostics.get(uri)?.diagnostics);
  const m = diags.find((d) => d.code === 'include-not-found')?.message;
  return typeof m === 'string' ? m : m?.value;
}

const netText = (target: string) => `Policy\nV1 a 0 5\nR1 a 0 1k\n.include ${target}\n.end\n`;

describe('the server reading includes', () => {
  it('reads a file in the netlist’s folder tree, and refuses one outside it, a pipe and a network path', async () => {
    session = await startServer();
    const inside = project('models/sub.inc', { 'models/sub.inc': 'R2 a 0 2k\n' });
    expect(await includeMessage(session, inside.uri, netText('models/sub.inc'))).toBeUndefined();
    const outside = project('/etc/hostname');
    expect(await includeMessage(session, outside.uri, netText('/etc/hostname'))).toMatch(/lies outside the folders qpoint may read/);
    const piped = project('pipe.inc');
    execFileSync('mkfifo', [join(piped.folder, 'pipe.inc')]);
    expect(await includeMessage(session, piped.uri, netText('pipe.inc'))).toMatch(/is a pipe/);
    const unc = project('\\\\fileserver\\share\\x.inc');
    expect(await includeMessage(session, unc.uri, netText('\\\\fileserver\\share\\x.inc'))).toMatch(/network share/);
  });

  it('reads the workspace folders’ trees and, with the setting, anywhere', async () => {
    const lib = mkdtempSync(join(tmpdir(), 'qpoint-wslib-'));
    writeFileSync(join(lib, 'm.inc'), 'R2 a 0 2k\n');
    const net = project(join(lib, 'm.inc'));
    session = await startServer({ workspaceFolders: [pathToFileURL(lib).href] });
    expect(await includeMessage(session, net.uri, netText(join(lib, 'm.inc')))).toBeUndefined();
    await session.stop();
    const other = mkdtempSync(join(tmpdir(), 'qpoint-anylib-'));
    writeFileSync(join(other, 'm.inc'), 'R2 a 0 2k\n');
    const net2 = project(join(other, 'm.inc'));
    session = await startServer({ settings: { includes: { readOutsideWorkspace: true } } });
    expect(await includeMessage(session, net2.uri, netText(join(other, 'm.inc')))).toBeUndefined();
  });

  it('reads nothing from disk in an untrusted workspace', async () => {
    session = await startServer({ initializationOptions: { workspaceTrusted: false } });
    const p = project('sub.inc', { 'sub.inc': 'R2 a 0 2k\n' });
    expect(await includeMessage(session, p.uri, netText('sub.inc'))).toMatch(/workspace is not trusted/);
  });
});

// The server over stdio facing a broken peer: malformed frames end it with a logged reason; versions and shutdown per the protocol.
import { afterEach, describe, expect, it } from 'vitest';
import { spawn, type ChildProcessWithoutNullStreams } from 'node:child_process';
import { ShutdownRequest, ErrorCodes, ResponseError, HoverRequest, DidChangeTextDocumentNotification } from 'vscode-languageserver-protocol/node';
import { SERVER, startServer, type ServerSession } from './lsp-client';

const children: ChildProcessWithoutNullStreams[] = [];
let session: ServerSession | undefined;
afterEach(async () => {
  for (const c of children.splice(0)) if (c.exitCode === null) c.kill();
  await session?.stop();
  session = undefined;
});

/** Starts the server, writes `bytes`, and waits (bounded) for it to exit; returns its exit code and stderr. */
async function feed(bytes: string, env: Record<string, string> = {}): Promise<{ code: number | null; stderr: string }> {
  const child = spawn(process.execPath, [SERVER, '--stdio'], { stdio: 'pipe', env: { ...process.env, ...env } });
  children.push(child);
  let stderr = '';
  child.stderr.on('data', (d) => (stderr += String(d)));
  const exited = new Promise<number | null>((r) => child.once('exit', (code) => r(code)));
  child.stdin.write(bytes);
  const code = await Promise.race([exited, new Promise<'alive'>((r) => setTimeout(() => r('alive'), 15000))]);
  if (code === 'alive') throw new Error(`The server is still running, silent, after a malformed frame. stderr:\n${stderr}`);
  return { code, stderr };
}

const body = JSON.stringify({ jsonrpc: '2.0', id: 1, method: 'initialize', params: { processId: null, rootUri: null, capabilities: {} } });

describe('a malformed frame ends the connection with a logged reason', () => {
  const cases: [string, string, RegExp, Record<string, string>?][] = [
    ['a non-numeric Content-Length', `Content-Length: ten\r\n\r\n${body}`, /Content-Length must be a whole number/],
    ['a negative Content-Length', `Content-Length: -5\r\n\r\n${body}`, /Content-Length must be a whole number/],
    ['a duplicate header', `Content-Length: ${body.length}\r\nContent-Length: ${body.length}\r\n\r\n${body}`, /given twice/],
    ['a header line ending in LF alone', `Content-Length: ${body.length}\n\n${body}`, /LF alone/],
    ['a short body followed by the next frame', `Content-Length: ${body.length - 10}\r\n\r\n${body}Content-Length: 2\r\n\r\n{}`, /not JSON/],
    ['a short body and then nothing', `Content-Length: ${body.length + 50}\r\n\r\n${body}`, /stopped arriving half-way/, { QPOINT_FRAME_STALL_MS: '500' }],
    ['no Content-Length', `Content-Type: application/vscode-jsonrpc; charset=utf-8\r\n\r\n${body}`, /no Content-Length/],
  ];
  for (const [what, bytes, reason, env] of cases) {
    it(what, async () => {
      const r = await feed(bytes, env);
      expect(r.code).toBe(1);
      expect(r.stderr).toMatch(/The connection is closed/);
      expect(r.stderr).toMatch(reason);
    });
  }
});

describe('versions and the shutdown sequence', () => {
  const URI = 'file:///tmp/qpoint-transport.cir';
  const TEXT = 'Divider\nV1 a 0 5\nR1 a b 1k\nR2 b 0 1k\n.end\n';

  it('ignores a change whose version is a string', async () => {
    session = await startServer();
    session.open(URI, TEXT, 1);
    await session.waitFor('first analysis', () => session!.diagnostics.get(URI));
    // Text that would raise a model-not-found error, sent with a string version: refused.
    await session.connection.sendNotification(DidChangeTextDocumentNotification.type, {
      textDocument: { uri: URI, version: '2' as unknown as number },
      contentChanges: [{ text: 'Bad\nV1 a 0 5\nQ1 a a 0 NOSUCH\n.end\n' }],
    });
    // An edit at the start: had the string-versioned text been taken, Q1 NOSUCH would still be in it.
    session.change(URI, 3, [{ range: { start: { line: 0, character: 0 }, end: { line: 0, character: 0 } }, text: 'Still ' }]);
    const d = await session.waitFor('the version-3 analysis', () => (session!.diagnostics.get(URI)?.version === 3 ? session!.diagnostics.get(URI) : undefined));
    expect(d.diagnostics.map((x) => x.code)).not.toContain('model-not-found');
  });

  it('refuses requests after shutdown with InvalidRequest, and exits 0 on exit', async () => {
    session = await startServer();
    session.open(URI, TEXT, 1);
    await session.waitFor('first analysis', () => session!.diagnostics.get(URI));
    await session.connection.sendRequest(ShutdownRequest.type);
    const err = await session.connection.sendRequest(HoverRequest.type, { textDocument: { uri: URI }, position: { line: 1, character: 1 } }).then(
      () => undefined,
      (e: unknown) => e,
    );
    expect(err).toBeInstanceOf(ResponseError);
    expect((err as ResponseError<unknown>).code).toBe(ErrorCodes.InvalidRequest);
    expect(await session.stop()).toBe(0);
    session = undefined;
  });
});

// While the main thread takes a large result in, an editor request must be answered before the next slice of that
// work runs. Two pieces make that so: the server's stream writer puts an answer's frame on the stream within the call
// that sends it, and the take-in's yield lets requests read meanwhile run first. The reference for the frames is
// vscode-jsonrpc's own reader and writer of the LSP base protocol (Content-Length in bytes of UTF-8, CRLF, JSON body).

import { describe, expect, it } from 'vitest';
import { PassThrough } from 'node:stream';
import { MessageChannel } from 'node:worker_threads';
import { StreamMessageReader, StreamMessageWriter, type Message } from 'vscode-jsonrpc/node';
import { ImmediateStreamWriter } from '../../../server/src/stream-writer';
import { turnForRequests } from '../../../server/src/worker-host';

/** Invented messages: a hover answer with text past ASCII (its byte length differs from its length), a notification, an error. */
const MESSAGES: Message[] = [
  { jsonrpc: '2.0', id: 7, result: { contents: { kind: 'markdown', value: 'RL3 — 4.7 kΩ, 212 µA, ΔV 0.99 V ✓' } } } as Message,
  { jsonrpc: '2.0', method: 'textDocument/publishDiagnostics', params: { uri: 'file:///a%20b.cir', version: 3, diagnostics: [] } } as Message,
  { jsonrpc: '2.0', id: 8, error: { code: -32602, message: 'needs a position' } } as Message,
];

/** Every message the library's reader finds in `bytes`. */
async function readBack(bytes: Buffer, count: number): Promise<Message[]> {
  const stream = new PassThrough();
  const reader = new StreamMessageReader(stream);
  const seen: Message[] = [];
  const done = new Promise<void>((resolve) => {
    reader.listen((m) => {
      seen.push(m);
      if (seen.length === count) resolve();
    });
  });
  stream.end(bytes);
  await done;
  reader.dispose();
  return seen;
}

/** What the library's writer puts on a stream for `messages`, once it has written all of them. */
async function libraryBytes(messages: Message[]): Promise<Buffer> {
  const stream = new PassThrough();
  const writer = new StreamMessageWriter(stream);
  for (const m of messages) await writer.write(m);
  return stream.read() as Buffer;
}

describe('the server writes each answer within the call that sends it', () => {
  it('writes the frames the library writes, which the library reads back as the same messages', async () => {
    const stream = new PassThrough();
    const writer = new ImmediateStreamWriter(stream);
    for (const m of MESSAGES) void writer.write(m);
    const bytes = stream.read() as Buffer;
    expect(bytes.equals(await libraryBytes(MESSAGES))).toBe(true);
    expect(await readBack(bytes, MESSAGES.length)).toEqual(MESSAGES);
  });

  it('has the whole frame on the stream when write returns, where the library has written nothing yet', () => {
    const ours = new PassThrough();
    void new ImmediateStreamWriter(ours).write(MESSAGES[0]!);
    const body = Buffer.from(JSON.stringify(MESSAGES[0]), 'utf8');
    expect((ours.read() as Buffer).toString('utf8')).toBe(`Content-Length: ${body.byteLength}\r\n\r\n${body.toString('utf8')}`);
    // The control: the library's writer queues the frame behind a turn of the event loop, which is what a slice of the take-in ran in.
    const library = new PassThrough();
    void new StreamMessageWriter(library).write(MESSAGES[0]!);
    expect(library.read()).toBeNull();
  });
});

/**
 * The order in which a request and the next piece of work run when the work yields with `yieldOnce` while the request
 * is being read. The request stands for the connection's: read in the event loop's poll phase (here a message on a
 * port), then handled in a `setImmediate` the reader queues, as vscode-jsonrpc does. The work starts in a
 * `setImmediate`, as a slice of the take-in does.
 */
async function whichFirst(yieldOnce: () => Promise<void>): Promise<string[]> {
  const { port1, port2 } = new MessageChannel();
  const order: string[] = [];
  const answered = new Promise<void>((resolve) => {
    port1.on('message', () =>
      setImmediate(() => {
        order.push('request');
        resolve();
      }),
    );
  });
  await new Promise<void>((done) =>
    setImmediate(async () => {
      port2.postMessage('hover');
      await yieldOnce();
      order.push('next slice');
      done();
    }),
  );
  await answered;
  port1.close();
  return order;
}

describe('the take-in gives a request read meanwhile its turn before its next slice', () => {
  it('answers the request first', async () => {
    for (let k = 0; k < 20; k++) expect(await whichFirst(turnForRequests)).toEqual(['request', 'next slice']);
  });

  it('the control: one setImmediate runs the next slice first', async () => {
    expect(await whichFirst(() => new Promise((r) => setImmediate(r)))).toEqual(['next slice', 'request']);
  });
});

// Writes LSP messages to a byte stream within the call that sends them, so an answer never waits for the main thread's next slice of work.

import { AbstractMessageWriter, type Message, type MessageWriter } from 'vscode-languageserver/node';

/**
 * An LSP base-protocol writer (a `Content-Length` header, an empty line, the message as UTF-8 JSON) that hands each
 * frame to the stream in one `write` inside `write` itself. The library's stream writer queues every message behind
 * a `setImmediate` and writes the body only once the header's write has called back: two or more turns of the
 * event loop, and while a large result is taken in each turn may run a slice of that work (about 4 ms) before the
 * answer goes out. One write per frame keeps frames whole and in order without a queue: the stream buffers what the
 * pipe does not take yet.
 */
export class ImmediateStreamWriter extends AbstractMessageWriter implements MessageWriter {
  private errorCount = 0;

  constructor(private readonly stream: NodeJS.WritableStream) {
    super();
    stream.on('error', (e: Error) => this.fireError(e));
    stream.on('close', () => this.fireClose());
  }

  write(msg: Message): Promise<void> {
    try {
      this.stream.write(frameOf(msg));
      this.errorCount = 0;
      return Promise.resolve();
    } catch (e) {
      const error = e instanceof Error ? e : new Error(String(e));
      this.fireError(error, msg, ++this.errorCount);
      return Promise.reject(error);
    }
  }

  end(): void {
    this.stream.end();
  }
}

/** The bytes of one message's frame: header and body in one buffer. */
export function frameOf(msg: Message): Buffer {
  const body = Buffer.from(JSON.stringify(msg), 'utf8');
  const header = Buffer.from(`Content-Length: ${body.byteLength}\r\n\r\n`, 'ascii');
  return Buffer.concat([header, body], header.byteLength + body.byteLength);
}

// Writes LSP messages to a byte stream within the call that sends them, so an answer never waits for the main thread's next slice of work.

import { AbstractMessageWriter, type Message, type MessageWriter } from 'vscode-languageserver/node';

/**
 * An LSP base-protocol writer (a `Content-Length` header, an empty line, the message as UTF-8 JSON) that hands each
 * frame to the stream inside `write` itself. The library's stream writer queues every message behind
 * a `setImmediate` and writes the body only once the header's write has called back: two or more turns of the
 * event loop, and while a large result is taken in each turn may run a slice of that work (about 4 ms) before the
 * answer goes out. Writing within the call keeps frames whole and in order without a queue: the stream buffers what
 * the pipe does not take yet.
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
      // Header and body in two writes of one call: nothing can come between them, and the body is not copied into a
      // buffer with the header (a document's outline or diagnostics can be megabytes).
      const body = JSON.stringify(msg);
      this.stream.write(`Content-Length: ${Buffer.byteLength(body, 'utf8')}\r\n\r\n`, 'ascii');
      this.stream.write(body, 'utf8');
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

// Reads LSP messages from a byte stream strictly: a malformed frame ends the connection with a reason instead of leaving it silent.

import { AbstractMessageReader, type DataCallback, type Disposable, type Message, type MessageReader } from 'vscode-languageserver/node';

/** A frame the reader cannot trust; after one the stream's framing is lost, so the connection must end. */
export class FrameError extends Error {}

/** The largest message body accepted (an open 64 MiB netlist as JSON, with room to spare). */
export const MAX_BODY_BYTES = 256 * 1024 * 1024;
/** The longest header section accepted. */
const MAX_HEADER_BYTES = 8 * 1024;
const CRLFCRLF = Buffer.from('\r\n\r\n', 'ascii');

/**
 * An LSP base-protocol reader (headers `Name: value` ending in CRLF, an empty line, then
 * Content-Length bytes of UTF-8 JSON) that refuses what the lenient reader lets through:
 * a missing, non-numeric, negative or duplicate Content-Length, any duplicate header, a
 * header line ending in LF alone, an oversized header or body, a body that is not JSON
 * (a short body swallows the next frame), and a message that stops arriving half-way
 * (`stallMs` without a byte). Each is reported as a FrameError through `onError`.
 */
export class StrictStreamReader extends AbstractMessageReader implements MessageReader {
  private buffer: Buffer = Buffer.alloc(0);
  private bodyLength = -1;
  private callback: DataCallback | undefined;
  private stallTimer: ReturnType<typeof setTimeout> | undefined;
  private failed = false;

  constructor(
    private readonly stream: NodeJS.ReadableStream,
    private readonly stallMs = 30_000,
  ) {
    super();
  }

  listen(callback: DataCallback): Disposable {
    this.callback = callback;
    const onData = (chunk: Buffer | string) => this.onData(typeof chunk === 'string' ? Buffer.from(chunk, 'utf8') : chunk);
    const onEnd = () => {
      this.clearStall();
      if (!this.failed && this.buffer.length > 0) this.fail('The input ended in the middle of a message.');
      this.fireClose();
    };
    const onError = (e: Error) => this.fireError(e);
    this.stream.on('data', onData);
    this.stream.on('end', onEnd);
    this.stream.on('error', onError);
    return {
      dispose: () => {
        this.stream.off('data', onData);
        this.stream.off('end', onEnd);
        this.stream.off('error', onError);
        this.clearStall();
      },
    };
  }

  private fail(reason: string): void {
    if (this.failed) return;
    this.failed = true;
    this.clearStall();
    this.buffer = Buffer.alloc(0);
    this.fireError(new FrameError(reason));
  }

  private clearStall(): void {
    if (this.stallTimer) clearTimeout(this.stallTimer);
    this.stallTimer = undefined;
  }

  private onData(chunk: Buffer): void {
    if (this.failed) return;
    this.buffer = this.buffer.length ? Buffer.concat([this.buffer, chunk]) : chunk;
    for (;;) {
      if (this.bodyLength < 0) {
        const end = this.buffer.indexOf(CRLFCRLF);
        const header = end < 0 ? this.buffer : this.buffer.subarray(0, end);
        // A bare LF in the header section: the peer does not speak the base protocol.
        for (let i = 0; i < header.length; i++) {
          if (header[i] === 0x0a && (i === 0 || header[i - 1] !== 0x0d)) return this.fail('A header line ends with LF alone; the protocol requires CRLF.');
        }
        if (end < 0) {
          if (this.buffer.length > MAX_HEADER_BYTES) return this.fail(`The header section is longer than ${MAX_HEADER_BYTES} bytes.`);
          break;
        }
        const length = this.parseHeaders(header.toString('ascii'));
        if (length === undefined) return;
        this.bodyLength = length;
        this.buffer = this.buffer.subarray(end + CRLFCRLF.length);
      }
      if (this.buffer.length < this.bodyLength) break;
      const body = this.buffer.subarray(0, this.bodyLength);
      this.buffer = this.buffer.subarray(this.bodyLength);
      this.bodyLength = -1;
      let message: Message;
      try {
        message = JSON.parse(body.toString('utf8')) as Message;
      } catch {
        return this.fail('A message body is not JSON (is its Content-Length right?).');
      }
      if (!message || typeof message !== 'object' || Array.isArray(message)) return this.fail('A message body is not a JSON object.');
      this.callback?.(message);
      if (this.failed) return;
    }
    this.clearStall();
    if (this.buffer.length > 0 || this.bodyLength >= 0) {
      this.stallTimer = setTimeout(() => this.fail(`A message stopped arriving half-way (no byte for ${Math.round(this.stallMs / 1000)} s).`), this.stallMs);
      this.stallTimer.unref?.();
    }
  }

  /** The Content-Length of a header section, or undefined after reporting why it is refused. */
  private parseHeaders(text: string): number | undefined {
    const seen = new Set<string>();
    let length: number | undefined;
    for (const line of text.split('\r\n')) {
      const colon = line.indexOf(':');
      if (colon <= 0) return void this.fail(`A header line is not 'Name: value': ${JSON.stringify(line.slice(0, 80))}.`);
      const name = line.slice(0, colon).trim().toLowerCase();
      const value = line.slice(colon + 1).trim();
      if (seen.has(name)) return void this.fail(`The header ${JSON.stringify(name)} is given twice.`);
      seen.add(name);
      if (name === 'content-length') {
        if (!/^[0-9]{1,10}$/.test(value)) return void this.fail(`Content-Length must be a whole number of bytes; got ${JSON.stringify(value.slice(0, 40))}.`);
        length = Number(value);
        if (length > MAX_BODY_BYTES) return void this.fail(`Content-Length ${length} is over the ${MAX_BODY_BYTES}-byte limit.`);
      } else if (name === 'content-type') {
        const charset = /charset=([^;]+)/i.exec(value)?.[1]?.trim().toLowerCase().replace(/^"|"$/g, '');
        if (charset && charset !== 'utf-8' && charset !== 'utf8') return void this.fail(`Only UTF-8 message bodies are read; got charset ${JSON.stringify(charset)}.`);
      }
    }
    if (length === undefined) return void this.fail('A message has no Content-Length header.');
    return length;
  }
}

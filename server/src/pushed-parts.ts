// The parts of a large result analysed with its corner phase to follow, which the worker sends unasked, all at once,
// so it is free for that phase when the main thread asks for it after the take-in: serialised in the worker and moved
// (not copied) to the main thread, which deserialises each when it merges it, inside the slice that merges it.

import { deserialize, serialize } from 'node:v8';
import type { AnalysisPart } from './analysis-transfer';

/** The worker's message carrying one pushed part (see `FromWorker`). */
export interface PushedPart {
  type: 'pushed-part';
  /** The id of the `analyse` request the part's result answered. */
  analysisId: number;
  index: number;
  /** The part as `v8.serialize` wrote it (the structured clone's own format). */
  bytes: Uint8Array;
}

/**
 * Builds parts `from` to `to` (exclusive) and posts each as it is built. A message waiting in the main thread's queue
 * is then a byte array, which the port hands over at once: when several wait, the port delivers them all in one task,
 * and a structured clone of each would be deserialised there, past the take-in's slices.
 */
export function pushParts(post: (msg: PushedPart, transfer: ArrayBuffer[]) => void, analysisId: number, parts: (() => AnalysisPart)[], from: number, to: number): void {
  for (let index = from; index < to; index++) {
    const written = serialize(parts[index]!());
    // The serialiser's buffer is its own; a view into a shared pool would have to be copied before its memory is moved.
    const bytes = written.byteOffset === 0 && written.byteLength === written.buffer.byteLength ? written : written.slice();
    post({ type: 'pushed-part', analysisId, index, bytes }, [bytes.buffer as ArrayBuffer]);
  }
}

/** The part a pushed message carries. */
export function pushedPart(bytes: Uint8Array): AnalysisPart {
  return deserialize(bytes) as AnalysisPart;
}

type Waiter = { resolve: (bytes: Uint8Array) => void; reject: (e: Error) => void };

/** The main thread's side: the pushed parts of one result, kept until the take-in asks for them in order. */
export class PartInbox {
  private readonly arrived = new Map<number, Uint8Array>();
  private waiter: { index: number } & Waiter | undefined;
  private failure: Error | undefined;

  put(index: number, bytes: Uint8Array): void {
    if (this.waiter?.index === index) {
      const w = this.waiter;
      this.waiter = undefined;
      w.resolve(bytes);
    } else this.arrived.set(index, bytes);
  }

  /** Part `index`, once it has arrived (one wait at a time: the take-in merges in order). */
  take(index: number): Promise<Uint8Array> {
    const bytes = this.arrived.get(index);
    if (bytes) {
      this.arrived.delete(index);
      return Promise.resolve(bytes);
    }
    if (this.failure) return Promise.reject(this.failure);
    return new Promise((resolve, reject) => (this.waiter = { index, resolve, reject }));
  }

  /** Ends the wait (the worker stopped or was restarted): parts not yet arrived never will. */
  fail(e: Error): void {
    this.failure = e;
    this.arrived.clear();
    const w = this.waiter;
    this.waiter = undefined;
    w?.reject(e);
  }
}

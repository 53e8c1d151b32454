// The analysis worker thread: runs the engine off the server's main thread and answers sweeps and sizing from its own last analyses.

import { parentPort } from 'node:worker_threads';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { outputCharacteristic } from '../../shared-analysis/src/features/sweep';
import { analyse } from '../../shared-analysis/src/service';
import { LineIndex } from '../../shared-analysis/src/syntax/line-index';
import type { Span } from '../../shared-analysis/src/types';
import { FileWorkspace } from './file-workspace';
import { splitAnalysis, type AnalysisPart } from './analysis-transfer';
import { sizeResistor } from './sizing';
import type { FromWorker, ToWorker } from './worker-messages';

const workspace = new FileWorkspace();
const openTexts = new Map<string, string>();
/** The worker's copy of each document's last analysis without the parsed text (sweeps and sizing need only the circuit). */
/** The parts of the last analysis still being taken in by the main thread, by request id. */
let outgoing: { id: number; parts: AnalysisPart[] } | undefined;
const lastAnalysis = new Map<string, { analysis: Analysis; texts: Map<string, string> }>();

function post(msg: FromWorker): void {
  parentPort?.postMessage(msg);
}

function errorText(e: unknown): string {
  return e instanceof Error ? `${e.message}${e.stack ? `\n${e.stack}` : ''}` : String(e);
}

/** The analysis that holds `uri`: its own, or one of a netlist that includes it. */
function analysisHolding(uri: string): Analysis | undefined {
  const own = lastAnalysis.get(uri);
  if (own) return own.analysis;
  for (const a of lastAnalysis.values()) if (a.texts.has(uri)) return a.analysis;
  return undefined;
}

/** The texts the analysis holding `uri` read. */
function textsHolding(uri: string): Map<string, string> | undefined {
  const own = lastAnalysis.get(uri);
  if (own) return own.texts;
  for (const a of lastAnalysis.values()) if (a.texts.has(uri)) return a.texts;
  return undefined;
}

function handle(msg: ToWorker): void {
  switch (msg.type) {
    case 'set-document':
      workspace.setOpen(msg.uri, msg.text);
      if (msg.text === undefined) {
        openTexts.delete(msg.uri);
        lastAnalysis.delete(msg.uri);
      } else openTexts.set(msg.uri, msg.text);
      return;
    case 'files-changed':
      workspace.invalidate(msg.uris);
      return;
    case 'analyse': {
      const text = openTexts.get(msg.uri);
      if (text === undefined) {
        post({ type: 'failed', id: msg.id, message: `The document ${msg.uri} is not open in the server.` });
        return;
      }
      const t0 = performance.now();
      try {
        const analysis = analyse({ uri: msg.uri, text, version: msg.version }, workspace, msg.options);
        const texts = new Map(Object.entries(analysis.documents).map(([u, d]) => [u, d.text] as [string, string]));
        lastAnalysis.set(msg.uri, { analysis: { ...analysis, documents: {} }, texts });
        const { header, parts } = splitAnalysis(analysis);
        outgoing = { id: msg.id, parts };
        post({ type: 'analysed', id: msg.id, analysis: header, parts: parts.length, ms: performance.now() - t0 });
      } catch (e) {
        post({ type: 'failed', id: msg.id, message: `The analysis stopped with an internal error: ${errorText(e)}` });
      }
      return;
    }
    case 'next-part': {
      const part = outgoing && outgoing.id === msg.analysisId ? outgoing.parts[msg.index] : undefined;
      if (!part) {
        post({ type: 'failed', id: msg.id, message: `Part ${msg.index} of analysis ${msg.analysisId} is no longer available.` });
        return;
      }
      if (msg.index === outgoing!.parts.length - 1) outgoing = undefined;
      post({ type: 'part', id: msg.id, index: msg.index, part });
      return;
    }
    case 'sweep': {
      const a = analysisHolding(msg.uri);
      if (!a) {
        post({ type: 'swept', id: msg.id, result: { error: `There is no finished analysis of ${msg.uri} yet.` } });
        return;
      }
      try {
        post({ type: 'swept', id: msg.id, result: outputCharacteristic(a, msg.device, msg.points) });
      } catch (e) {
        post({ type: 'failed', id: msg.id, message: `The sweep stopped with an internal error: ${errorText(e)}` });
      }
      return;
    }
    case 'size-resistor': {
      const a = analysisHolding(msg.uri);
      if (!a) {
        post({ type: 'sized', id: msg.id, result: { error: `There is no finished analysis of ${msg.uri} yet.` } });
        return;
      }
      try {
        const texts = textsHolding(msg.uri);
        const toRange = (uri: string, span: Span) => {
          const text = texts?.get(uri);
          if (text === undefined) return undefined;
          const index = new LineIndex(text);
          return { start: index.positionAt(span.start, msg.encoding), end: index.positionAt(span.end, msg.encoding) };
        };
        post({ type: 'sized', id: msg.id, result: sizeResistor(a, msg.resistor, msg.target, toRange) });
      } catch (e) {
        post({ type: 'failed', id: msg.id, message: `Sizing stopped with an internal error: ${errorText(e)}` });
      }
      return;
    }
  }
}

parentPort?.on('message', (msg: ToWorker) => {
  try {
    handle(msg);
  } catch (e) {
    const id = 'id' in msg && typeof msg.id === 'number' ? msg.id : -1;
    post({ type: 'failed', id, message: errorText(e) });
  }
});

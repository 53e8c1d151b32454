// A real JSON-RPC client for the built language server, spawned over stdio: what the LSP tests drive it with.

import { spawn, type ChildProcessWithoutNullStreams } from 'node:child_process';
import { existsSync } from 'node:fs';
import { resolve } from 'node:path';
import { createMessageConnection, StreamMessageReader, StreamMessageWriter, type MessageConnection } from 'vscode-jsonrpc/node';
import {
  ConfigurationRequest,
  DidChangeTextDocumentNotification,
  DidOpenTextDocumentNotification,
  ExitNotification,
  InitializedNotification,
  InitializeRequest,
  type InitializeResult,
  InlayHintRefreshRequest,
  LogMessageNotification,
  PublishDiagnosticsNotification,
  RegistrationRequest,
  ShutdownRequest,
  WorkDoneProgressCreateRequest,
  type Diagnostic,
  type PublishDiagnosticsParams,
  type TextDocumentContentChangeEvent,
} from 'vscode-languageserver-protocol/node';

/** Path of the bundled server under test. */
export const SERVER = resolve(__dirname, '../../dist/server.js');

/** A started server with a connected client. */
export interface ServerSession {
  child: ChildProcessWithoutNullStreams;
  connection: MessageConnection;
  /** Latest published diagnostics per URI, and how many times each URI was published. */
  diagnostics: Map<string, PublishDiagnosticsParams>;
  publishCount: Map<string, number>;
  /** Every diagnostics notification, in the order received. */
  published: PublishDiagnosticsParams[];
  stderr: string[];
  /** Number of inlay-hint refresh requests the server sent. */
  refreshes: number;
  /** What the server answered to initialize (its capabilities). */
  initializeResult: InitializeResult | undefined;
  /** What the client answers to workspace/configuration for section `qpoint` (null: the client has no such section). */
  section: unknown;
  /** The server's log lines (window/logMessage). */
  logs: string[];
  open(uri: string, text: string, version?: number): void;
  change(uri: string, version: number, changes: TextDocumentContentChangeEvent[]): void;
  /** Polls until `pick()` returns a value (not undefined/false) or the time runs out. */
  waitFor<T>(what: string, pick: () => T | undefined | false, timeoutMs?: number): Promise<T>;
  diagnosticsOf(uri: string): Diagnostic[];
  stop(): Promise<number | null>;
}

/** Options for {@link startServer}. */
export interface StartOptions {
  /** The qpoint settings section the client hands out on workspace/configuration. */
  settings?: Record<string, unknown> | null;
  positionEncodings?: string[];
  /** Sent as initializationOptions (the VS Code client sends `{ workspaceTrusted }`). */
  initializationOptions?: unknown;
  /** Workspace folder URIs. */
  workspaceFolders?: string[];
  /** Whether the client answers workspace/configuration (default true); without it the server reads pushed settings. */
  pullConfiguration?: boolean;
  /** Extra client capabilities, merged over the defaults one level deep (e.g. `{ window: { showMessage: {} } }`). */
  capabilities?: Record<string, Record<string, unknown>>;
  /** Extra environment variables for the server process. */
  env?: Record<string, string>;
}

/** Spawns `node dist/server.js --stdio` and initializes it like an editor would. */
export async function startServer(options: StartOptions = {}): Promise<ServerSession> {
  if (!existsSync(SERVER)) throw new Error(`Build the server first (npm run build): ${SERVER} is missing.`);
  const child = spawn(process.execPath, [SERVER, '--stdio'], { stdio: 'pipe', ...(options.env ? { env: { ...process.env, ...options.env } } : {}) });
  const stderr: string[] = [];
  child.stderr.on('data', (d) => stderr.push(String(d)));
  const connection = createMessageConnection(new StreamMessageReader(child.stdout), new StreamMessageWriter(child.stdin));
  const diagnostics = new Map<string, PublishDiagnosticsParams>();
  const publishCount = new Map<string, number>();
  const session: ServerSession = {
    child,
    connection,
    diagnostics,
    publishCount,
    published: [],
    stderr,
    refreshes: 0,
    initializeResult: undefined,
    section: options.settings === undefined ? {} : options.settings,
    logs: [],
    open(uri, text, version = 1) {
      void connection.sendNotification(DidOpenTextDocumentNotification.type, { textDocument: { uri, languageId: 'netlist', version, text } });
    },
    change(uri, version, changes) {
      void connection.sendNotification(DidChangeTextDocumentNotification.type, { textDocument: { uri, version }, contentChanges: changes });
    },
    async waitFor(what, pick, timeoutMs = 20000) {
      const until = Date.now() + timeoutMs;
      for (;;) {
        const v = pick();
        if (v !== undefined && v !== false) return v as never;
        if (Date.now() > until) throw new Error(`Timed out waiting for ${what}. Server stderr:\n${stderr.join('')}`);
        await new Promise((r) => setTimeout(r, 15));
      }
    },
    diagnosticsOf(uri) {
      return diagnostics.get(uri)?.diagnostics ?? [];
    },
    async stop() {
      const exited = new Promise<number | null>((r) => child.once('exit', (code) => r(code)));
      try {
        await connection.sendRequest(ShutdownRequest.type);
        await connection.sendNotification(ExitNotification.type);
      } catch {
        child.kill();
      }
      const code = await Promise.race([exited, new Promise<number | null>((r) => setTimeout(() => r(-999), 5000))]);
      if (code === -999) child.kill();
      connection.dispose();
      return code;
    },
  };
  connection.onNotification(PublishDiagnosticsNotification.type, (p) => {
    diagnostics.set(p.uri, p);
    session.published.push(p);
    publishCount.set(p.uri, (publishCount.get(p.uri) ?? 0) + 1);
  });
  connection.onRequest(ConfigurationRequest.type, (p) => p.items.map((i) => (i.section === 'qpoint' ? session.section : null)));
  connection.onNotification(LogMessageNotification.type, (p) => void session.logs.push(p.message));
  connection.onRequest(RegistrationRequest.type, () => undefined);
  connection.onRequest(WorkDoneProgressCreateRequest.type, () => undefined);
  connection.onRequest(InlayHintRefreshRequest.type, () => {
    session.refreshes++;
    return undefined;
  });
  connection.onNotification(() => undefined);
  connection.listen();
  session.initializeResult = await connection.sendRequest(InitializeRequest.type, {
    processId: process.pid,
    rootUri: null,
    capabilities: mergeCapabilities(
      {
        general: { positionEncodings: (options.positionEncodings ?? ['utf-16']) as never },
        workspace: { configuration: options.pullConfiguration !== false, inlayHint: { refreshSupport: true }, didChangeWatchedFiles: { dynamicRegistration: false } },
        window: { workDoneProgress: true },
        textDocument: { publishDiagnostics: { relatedInformation: true }, inlayHint: {}, hover: { contentFormat: ['markdown'] } },
      },
      options.capabilities,
    ),
    workspaceFolders: options.workspaceFolders ? options.workspaceFolders.map((uri, i) => ({ uri, name: `folder${i}` })) : null,
    ...(options.initializationOptions !== undefined ? { initializationOptions: options.initializationOptions } : {}),
  });
  await connection.sendNotification(InitializedNotification.type, {});
  return session;
}

function mergeCapabilities(base: Record<string, Record<string, unknown>>, extra: Record<string, Record<string, unknown>> | undefined): never {
  const out: Record<string, Record<string, unknown>> = { ...base };
  for (const [k, v] of Object.entries(extra ?? {})) out[k] = { ...(out[k] ?? {}), ...v };
  return out as never;
}

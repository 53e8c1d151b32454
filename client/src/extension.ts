// The qpoint VS Code extension: starts the bundled language server and turns its custom requests into commands and a chart panel.
import { randomBytes } from 'node:crypto';
import * as path from 'node:path';
import * as vscode from 'vscode';
import { LanguageClient, TransportKind, type LanguageClientOptions, type ServerOptions } from 'vscode-languageclient/node';
import {
  INACTIVE_TEXT_NOTIFICATION,
  LIST_OUTPUTS_REQUEST,
  MONTE_CARLO_REQUEST,
  OUTPUT_CHARACTERISTIC_REQUEST,
  REANALYSE_COMMAND,
  SIZE_RESISTOR_REQUEST,
  SIZE_COMMAND,
  CLIENT_COMMANDS_OPTION,
  type ListOutputsParams,
  type ListOutputsResult,
  type MonteCarloParams,
  type MonteCarloReply,
  type OutputCharacteristicParams,
  type OutputCharacteristicResult,
  type SizeResistorParams,
  type SizeResistorResult,
} from '../../server/src/protocol';
import { formatEngineering, formatPercent } from '../../shared-analysis/src/fixes/format';
import { readTargetCurrent } from './current-input';
import { parseRunsAndSeed } from './monte-carlo-input';
import { isUnclaimedNetFile, readsAsSpiceNetlist } from './net-sniff';
import { renderPanelHtml } from './panel';
import { elementAtLine, isResistorName, outputsMatching } from './targets';
import { INACTIVE_OPACITY, InactiveText } from './inactive';

/** Files whose changes can change an analysis: netlists and the files they include. */
export const NETLIST_FILE_GLOB = '**/*.{cir,sp,spi,ckt,net,inc,lib,mod}';
/** How long a custom request may take before the user is told it did not answer. */
const REQUEST_TIMEOUT_MS = 60_000;

let client: LanguageClient | undefined;
/** Settles when the first start of the server has finished (successfully or not). */
let firstStart: Promise<void> = Promise.resolve();
let started = false;
/** Starts the server if it has not been started (a command may run before any netlist is open). */
let startServer: () => Promise<void> = () => Promise.resolve();
const panels = new Map<string, vscode.WebviewPanel>();

/** Starts the language server and registers the commands. */
export async function activate(context: vscode.ExtensionContext): Promise<void> {
  const output = vscode.window.createOutputChannel('qpoint', { log: true });
  context.subscriptions.push(output);

  const serverModule = context.asAbsolutePath(path.join('dist', 'server.js'));
  const serverOptions: ServerOptions = {
    run: { module: serverModule, transport: TransportKind.ipc },
    debug: { module: serverModule, transport: TransportKind.ipc, options: { execArgv: ['--nolazy', '--inspect=6009'] } },
  };
  const watcher = vscode.workspace.createFileSystemWatcher(NETLIST_FILE_GLOB);
  context.subscriptions.push(watcher);
  const clientOptions: LanguageClientOptions = {
    documentSelector: [
      { language: 'netlist', scheme: 'file' },
      { language: 'netlist', scheme: 'untitled' },
    ],
    synchronize: { configurationSection: 'qpoint', fileEvents: watcher },
    outputChannel: output,
    // In an untrusted workspace the server reads no included file from disk (see capabilities.untrustedWorkspaces).
    // The sizing refactor runs this extension's own command, which asks for the current in an input box.
    initializationOptions: () => ({ workspaceTrusted: vscode.workspace.isTrusted, [CLIENT_COMMANDS_OPTION]: [SIZE_COMMAND] }),
  };
  client = new LanguageClient('qpoint', 'qpoint', serverOptions, clientOptions);

  context.subscriptions.push(
    vscode.commands.registerCommand(SIZE_COMMAND, (args?: unknown) => sizeResistorCommand(args)),
    vscode.commands.registerCommand('qpoint.plotOutputCharacteristic', (args?: unknown) => plotCommand(args)),
    vscode.commands.registerCommand('qpoint.reanalyse', () => reanalyseCommand()),
    vscode.commands.registerCommand('qpoint.runMonteCarlo', () => monteCarloCommand(output)),
  );

  // `.if` branches no instance takes, drawn faded in every visible editor of their document.
  const inactive = new InactiveText();
  const faded = vscode.window.createTextEditorDecorationType({ opacity: INACTIVE_OPACITY, rangeBehavior: vscode.DecorationRangeBehavior.ClosedClosed });
  const drawInactive = (editor: vscode.TextEditor): void => {
    const ranges = inactive.rangesOf(editor.document.uri.toString()).map((r) => new vscode.Range(r.start.line, r.start.character, r.end.line, r.end.character));
    editor.setDecorations(faded, ranges);
  };
  context.subscriptions.push(
    faded,
    client.onNotification(INACTIVE_TEXT_NOTIFICATION, (params: unknown) => {
      const uri = inactive.update(params);
      if (uri === undefined) return;
      for (const editor of vscode.window.visibleTextEditors) if (editor.document.uri.toString() === uri) drawInactive(editor);
    }),
    vscode.window.onDidChangeVisibleTextEditors((editors) => editors.forEach(drawInactive)),
  );

  // Trust granted later: start the server again so it may read included files.
  context.subscriptions.push(
    vscode.workspace.onDidGrantWorkspaceTrust(() => {
      const c = client;
      if (c && started) {
        void c.restart().catch((e: unknown) => output.error(`qpoint could not restart its language server: ${errorText(e)}`));
      }
    }),
  );

  // `.net` is also what PCB tools write: such a file opens as plain text, and becomes a netlist only when its
  // first cards read as one. The server starts with the first netlist, so other plain-text files cost nothing.
  const c = client;
  const startOnce = (): Promise<void> => {
    if (!started) {
      started = true;
      firstStart = c.start().catch((e: unknown) => {
        const message = `qpoint could not start its language server (${serverModule}): ${errorText(e)}`;
        output.error(message);
        void vscode.window.showErrorMessage(message);
      });
    }
    return firstStart;
  };
  startServer = startOnce;
  const consider = (doc: vscode.TextDocument): void => {
    if (doc.languageId === 'netlist') void startOnce();
    else if (isUnclaimedNetFile(doc) && readsAsSpiceNetlist(doc.getText())) void vscode.languages.setTextDocumentLanguage(doc, 'netlist');
  };
  context.subscriptions.push(vscode.workspace.onDidOpenTextDocument(consider));
  for (const doc of vscode.workspace.textDocuments) consider(doc);
}

/** Stops the language server. */
export async function deactivate(): Promise<void> {
  for (const p of panels.values()) p.dispose();
  panels.clear();
  const c = client;
  client = undefined;
  if (c) await c.stop(5000).catch(() => undefined);
}

function errorText(e: unknown): string {
  return e instanceof Error ? e.message : String(e);
}

/** The running client (waiting a bounded time for a start in progress), or undefined after telling the user why there is none. */
async function runningClient(): Promise<LanguageClient | undefined> {
  await Promise.race([startServer(), new Promise((resolve) => setTimeout(resolve, 30_000))]);
  if (client && client.isRunning()) return client;
  void vscode.window.showErrorMessage('The qpoint language server is not running; open a netlist or run "qpoint: Re-analyse open netlists" to start it, and see the "qpoint" output for the reason.');
  return undefined;
}

/**
 * Sends a custom request with a progress notification and a time limit, so the user never waits
 * on a silent editor. Returns undefined (after telling the user) on failure or cancellation.
 */
async function request<P, R>(c: LanguageClient, method: string, params: P, title: string): Promise<R | undefined> {
  return vscode.window.withProgress({ location: vscode.ProgressLocation.Notification, title, cancellable: true }, async (_progress, token) => {
    const source = new vscode.CancellationTokenSource();
    const cancelled = token.onCancellationRequested(() => source.cancel());
    let timer: NodeJS.Timeout | undefined;
    try {
      const timeout = new Promise<'timeout'>((resolve) => {
        timer = setTimeout(() => resolve('timeout'), REQUEST_TIMEOUT_MS);
      });
      const answer = await Promise.race([c.sendRequest<R>(method, params, source.token), timeout]);
      if (answer === 'timeout') {
        source.cancel();
        void vscode.window.showErrorMessage(`${title}: the language server gave no answer within ${REQUEST_TIMEOUT_MS / 1000} s; the request was cancelled.`);
        return undefined;
      }
      // A server may answer a request it cannot serve with `{ error }` instead of a JSON-RPC error.
      const refused = answer && typeof answer === 'object' && typeof (answer as { error?: unknown }).error === 'string' ? (answer as unknown as { error: string }).error : undefined;
      if (refused !== undefined) {
        void vscode.window.showErrorMessage(`${title}: ${refused}`);
        return undefined;
      }
      return answer as R;
    } catch (e) {
      if (token.isCancellationRequested) return undefined;
      void vscode.window.showErrorMessage(`${title} failed: ${errorText(e)}`);
      return undefined;
    } finally {
      if (timer) clearTimeout(timer);
      cancelled.dispose();
      source.dispose();
    }
  });
}

/** The netlist editor a palette command acts on, or undefined after telling the user. */
function activeNetlistEditor(): vscode.TextEditor | undefined {
  const editor = vscode.window.activeTextEditor;
  if (editor && editor.document.languageId === 'netlist') return editor;
  void vscode.window.showErrorMessage('Open a netlist (.cir, .sp, .spi, .ckt, .net) and put the cursor on the element first.');
  return undefined;
}

function elementUnderCursor(editor: vscode.TextEditor): string | undefined {
  const doc = editor.document;
  return elementAtLine((n) => (n >= 0 && n < doc.lineCount ? doc.lineAt(n).text : ''), editor.selection.active.line);
}

/** `qpoint.sizeResistorForCurrent`: ask for a target current, show standard-value candidates, apply the chosen one. */
async function sizeResistorCommand(args: unknown): Promise<void> {
  const c = await runningClient();
  if (!c) return;
  let uri: string | undefined;
  let resistor: string | undefined;
  if (args && typeof args === 'object' && typeof (args as { uri?: unknown }).uri === 'string' && typeof (args as { resistor?: unknown }).resistor === 'string') {
    uri = (args as { uri: string }).uri;
    resistor = (args as { resistor: string }).resistor;
  } else {
    const editor = activeNetlistEditor();
    if (!editor) return;
    const name = elementUnderCursor(editor);
    if (!isResistorName(name)) {
      void vscode.window.showErrorMessage(name
        ? `${name} is not a resistor; put the cursor on a resistor card (its name starts with R) to size it for a current.`
        : 'Put the cursor on a resistor card (its name starts with R) to size it for a current.');
      return;
    }
    uri = c.code2ProtocolConverter.asUri(editor.document.uri);
    resistor = name;
  }

  const target = await vscode.window.showInputBox({
    title: `Size ${resistor} for a target current`,
    prompt: 'Target current, in engineering notation (m = milli, u = micro, n = nano); the unit A is optional.',
    placeHolder: 'e.g. 250u or 1.2mA',
    ignoreFocusOut: true,
    validateInput: (text) => {
      const r = readTargetCurrent(text);
      return r.ok ? { message: `Reads as ${r.readsAs}.`, severity: vscode.InputBoxValidationSeverity.Info } : r.message;
    },
  });
  if (target === undefined) return;
  const read = readTargetCurrent(target);
  if (!read.ok) return;

  const params: SizeResistorParams = { uri, resistor, target: target.trim() };
  const result = await request<SizeResistorParams, SizeResistorResult>(c, SIZE_RESISTOR_REQUEST, params, `Sizing ${resistor} for ${read.readsAs}`);
  if (!result) return;
  const candidates = Array.isArray(result.candidates) ? result.candidates : [];
  if (candidates.length === 0) {
    void vscode.window.showWarningMessage(`No standard value of ${resistor} gives ${read.readsAs}${Number.isFinite(result.ideal) ? ` (the exact value would be ${formatEngineering(result.ideal, { unit: 'Ω' })})` : ''}.`);
    return;
  }
  type Item = vscode.QuickPickItem & { candidate: (typeof candidates)[number] };
  const items: Item[] = candidates.map((candidate) => ({
    label: candidate.valueText,
    description: `${Number.isFinite(candidate.current) ? formatEngineering(candidate.current, { unit: 'A' }) : 'current not known'}, ${formatPercent(candidate.error)} from the target`,
    detail: candidate.label,
    candidate,
  }));
  const picked = await vscode.window.showQuickPick(items, {
    title: `Standard values for ${resistor} (target ${read.readsAs})`,
    placeHolder: Number.isFinite(result.ideal)
      ? `The exact value would be ${formatEngineering(result.ideal, { unit: 'Ω' })}; pick a standard value to write into the netlist`
      : 'Pick a standard value to write into the netlist',
    ignoreFocusOut: true,
  });
  if (!picked) return;
  const edit = await c.protocol2CodeConverter.asWorkspaceEdit(picked.candidate.edit as Parameters<typeof c.protocol2CodeConverter.asWorkspaceEdit>[0]);
  if (!edit || edit.size === 0) {
    void vscode.window.showErrorMessage(`The language server sent no edit for ${resistor} = ${picked.candidate.valueText}; nothing was changed.`);
    return;
  }
  const applied = await vscode.workspace.applyEdit(edit);
  if (!applied) void vscode.window.showErrorMessage(`The editor refused the edit that sets ${resistor} to ${picked.candidate.valueText} (the file may have changed or be read-only).`);
}

/** Runs per Monte Carlo request: small enough that progress moves and a stop is quick. */
const MONTE_CARLO_CHUNK = 50;

/**
 * `qpoint.runMonteCarlo`: asks for the number of runs (and a seed), runs them in the server's
 * worker chunk by chunk with a cancellable progress notification, and writes every output's
 * Monte Carlo figures and histogram beside its linear spread to the qpoint output.
 */
async function monteCarloCommand(output: vscode.OutputChannel): Promise<void> {
  const c = await runningClient();
  if (!c) return;
  const editor = activeNetlistEditor();
  if (!editor) return;
  const answer = await vscode.window.showInputBox({
    title: 'qpoint: Monte Carlo',
    prompt: 'Number of runs, and optionally a seed (the same seed repeats the numbers)',
    value: '1000',
    validateInput: (text) => (parseRunsAndSeed(text) ? undefined : 'Write a whole number of runs from 1 to 100000, optionally followed by a whole seed, e.g. "1000" or "1000 7".'),
  });
  const parsed = answer === undefined ? undefined : parseRunsAndSeed(answer);
  if (!parsed) return;
  const uri = c.code2ProtocolConverter.asUri(editor.document.uri);
  const name = path.basename(editor.document.uri.fsPath);
  const reply = await vscode.window.withProgress(
    { location: vscode.ProgressLocation.Notification, title: `Monte Carlo of ${name}`, cancellable: true },
    async (progress, token): Promise<MonteCarloReply | undefined> => {
      try {
        let first = 0;
        while (first < parsed.runs && !token.isCancellationRequested) {
          const count = Math.min(MONTE_CARLO_CHUNK, parsed.runs - first);
          const r = await c.sendRequest<MonteCarloReply>(MONTE_CARLO_REQUEST, { uri, seed: parsed.seed, first, count } satisfies MonteCarloParams);
          first += count;
          progress.report({ increment: (100 * count) / parsed.runs, message: `${r.runs} of ${parsed.runs} runs` });
        }
        // Stopped or done: the figures of the runs made so far.
        return await c.sendRequest<MonteCarloReply>(MONTE_CARLO_REQUEST, { uri, seed: parsed.seed, first, count: 0, finish: true } satisfies MonteCarloParams);
      } catch (e) {
        void vscode.window.showErrorMessage(`Monte Carlo of ${name} failed: ${errorText(e)}`);
        return undefined;
      }
    },
  );
  if (!reply?.report) return;
  output.appendLine(`Monte Carlo of ${name}: ${reply.runs} runs (${reply.converged} converged), seed ${parsed.seed}`);
  for (const line of reply.report) output.appendLine(line);
  output.appendLine('Each output’s histogram is drawn in its output-characteristic panel (qpoint: Plot a mirror output characteristic).');
  output.show(true);
  await redrawPanels(c, editor.document.uri);
}

/** Asks again for the output characteristic of every open panel of a netlist (after Monte Carlo, so they show its histogram). */
async function redrawPanels(c: LanguageClient, documentUri: vscode.Uri): Promise<void> {
  const prefix = `${documentUri.toString()}#`;
  const uri = c.code2ProtocolConverter.asUri(documentUri);
  for (const key of [...panels.keys()]) {
    if (!key.startsWith(prefix)) continue;
    const device = key.slice(prefix.length);
    try {
      const result = await c.sendRequest<OutputCharacteristicResult>(OUTPUT_CHARACTERISTIC_REQUEST, { uri, device } satisfies OutputCharacteristicParams);
      if (panels.has(key)) showCharacteristic(documentUri, result);
    } catch {
      // The panel keeps what it showed; plotting again shows the histogram.
    }
  }
}

/** `qpoint.plotOutputCharacteristic`: pick a mirror output and show its output characteristic. */
async function plotCommand(args: unknown): Promise<void> {
  const c = await runningClient();
  if (!c) return;
  let uri: string;
  let documentUri: vscode.Uri;
  let device: string | undefined;
  if (args && typeof args === 'object' && typeof (args as { uri?: unknown }).uri === 'string') {
    uri = (args as { uri: string }).uri;
    documentUri = c.protocol2CodeConverter.asUri(uri);
    const d = (args as { device?: unknown }).device;
    if (typeof d === 'string') device = d;
  } else {
    const editor = activeNetlistEditor();
    if (!editor) return;
    documentUri = editor.document.uri;
    uri = c.code2ProtocolConverter.asUri(documentUri);
  }

  if (!device) {
    const list = await request<ListOutputsParams, ListOutputsResult>(c, LIST_OUTPUTS_REQUEST, { uri }, 'Finding mirror outputs');
    if (!list) return;
    const outputs = Array.isArray(list.outputs) ? list.outputs : [];
    if (outputs.length === 0) {
      void vscode.window.showInformationMessage(`No current-mirror output was recognised in ${path.basename(documentUri.fsPath || documentUri.path)}, so there is nothing to plot.`);
      return;
    }
    const editor = vscode.window.activeTextEditor;
    const atCursor = editor && editor.document.uri.toString() === documentUri.toString() ? elementUnderCursor(editor) : undefined;
    const matches = atCursor ? outputsMatching(outputs, atCursor) : [];
    if (matches.length === 1) device = matches[0]!.device;
    else {
      const choices = matches.length > 1 ? matches : outputs;
      const picked = await vscode.window.showQuickPick(
        choices.map((o) => ({ label: o.device, description: `output node ${o.node}`, detail: `${o.kind} (${o.structureId})`, device: o.device })),
        { title: 'Plot the output characteristic of', placeHolder: 'Pick a mirror output', ignoreFocusOut: true },
      );
      if (!picked) return;
      device = picked.device;
    }
  }

  const params: OutputCharacteristicParams = { uri, device };
  const result = await request<OutputCharacteristicParams, OutputCharacteristicResult>(c, OUTPUT_CHARACTERISTIC_REQUEST, params, `Sweeping the output of ${device}`);
  if (!result) return;
  showCharacteristic(documentUri, result);
}

function showCharacteristic(documentUri: vscode.Uri, result: OutputCharacteristicResult): void {
  const key = `${documentUri.toString()}#${result.device}`;
  const title = `Output characteristic: ${result.device}`;
  let panel = panels.get(key);
  if (panel) panel.reveal(vscode.ViewColumn.Beside, true);
  else {
    panel = vscode.window.createWebviewPanel('qpoint.outputCharacteristic', title, { viewColumn: vscode.ViewColumn.Beside, preserveFocus: true }, {
      enableScripts: false,
      enableCommandUris: false,
      localResourceRoots: [],
    });
    panels.set(key, panel);
    panel.onDidDispose(() => panels.delete(key));
  }
  panel.title = title;
  panel.webview.html = renderPanelHtml(result, {
    nonce: randomBytes(16).toString('base64'),
    documentLabel: path.basename(documentUri.fsPath || documentUri.path),
  });
}

/**
 * `qpoint.reanalyse`: asks the server to analyse every open netlist again through its
 * `qpoint.server.reanalyse` command; a server without that command is restarted instead.
 */
async function reanalyseCommand(): Promise<void> {
  const c = client;
  if (!c) return;
  const commands = c.initializeResult?.capabilities.executeCommandProvider?.commands ?? [];
  if (c.isRunning() && commands.includes(REANALYSE_COMMAND)) {
    try {
      await c.sendRequest('workspace/executeCommand', { command: REANALYSE_COMMAND, arguments: [] });
      vscode.window.setStatusBarMessage('qpoint: re-analysing open netlists', 3000);
      return;
    } catch (e) {
      void vscode.window.showWarningMessage(`The language server did not re-analyse (${errorText(e)}); restarting it instead.`);
    }
  }
  try {
    if (c.isRunning()) await c.restart();
    else if (!started) await startServer();
    else await c.start();
    vscode.window.setStatusBarMessage('qpoint: language server restarted', 3000);
  } catch (e) {
    void vscode.window.showErrorMessage(`qpoint could not restart its language server: ${errorText(e)}`);
  }
}

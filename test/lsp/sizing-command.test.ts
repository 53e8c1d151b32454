// The built language server over stdio with a plain LSP client: the "Size … for a target current" refactor runs the
// server's own command, which asks with window/showMessageRequest (or takes the target as an argument) and writes the
// value with workspace/applyEdit; a client that can do neither is not offered it.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TextDocument } from 'vscode-languageserver-textdocument';
import {
  ApplyWorkspaceEditRequest,
  CodeActionRequest,
  ExecuteCommandRequest,
  ShowMessageNotification,
  ShowMessageRequest,
  type ApplyWorkspaceEditParams,
  type CodeAction,
  type MessageActionItem,
  type ShowMessageRequestParams,
  type TextEdit,
} from 'vscode-languageserver-protocol/node';
import { startServer, type ServerSession, type StartOptions } from './lsp-client';

// A simple NPN mirror (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4): IREF = (VCC − VBE)/R1, IOUT = IREF/(1 + 2/β).
const TEXT = '5 V mirror\nVCC vcc 0 DC 5\nR1 vcc b 6.8k\nQ1 b b 0 qn\nQ2 out b 0 qn\nRL vcc out 2k\n.model qn npn (IS=1e-16 BF=100)\n.end\n';
const VT = 0.025852; // kT/q at 27 °C (CODATA constants)
/** The output current a reference resistor gives by the hand formula above, VBE = VT·ln(IC/IS) solved by fixed-point iteration. */
function handIout(r: number): number {
  let i = 1e-3;
  for (let k = 0; k < 50; k++) i = (5 - VT * Math.log(i / 1e-16)) / r / 1.02;
  return i;
}
/** Ohms of a netlist value such as `4.3k`. */
const ohms = (t: string) => Number(t.replace(/k$/i, 'e3').replace(/meg$/i, 'e6'));

interface Client {
  s: ServerSession;
  uri: string;
  asked: ShowMessageRequestParams[];
  told: string[];
  applied: ApplyWorkspaceEditParams[];
  /** How the user answers each question, in turn (a title to pick, or null to dismiss). */
  answers: ((p: ShowMessageRequestParams) => MessageActionItem | null)[];
}

let n = 0;
async function client(options: StartOptions): Promise<Client> {
  const s = await startServer({ settings: { analysisDelayMs: 0, corners: { enabled: false } }, ...options });
  const c: Client = { s, uri: `file:///sizing-${++n}.cir`, asked: [], told: [], applied: [], answers: [] };
  s.connection.onRequest(ShowMessageRequest.type, (p) => {
    c.asked.push(p);
    const answer = c.answers.shift();
    return answer ? answer(p) : null;
  });
  s.connection.onNotification(ShowMessageNotification.type, (p) => void c.told.push(p.message));
  s.connection.onRequest(ApplyWorkspaceEditRequest.type, (p) => {
    c.applied.push(p);
    return { applied: true };
  });
  s.open(c.uri, TEXT);
  await s.waitFor('first diagnostics', () => s.diagnostics.get(c.uri));
  return c;
}

async function sizingAction(c: Client): Promise<CodeAction | undefined> {
  const actions = (await c.s.connection.sendRequest(CodeActionRequest.type, {
    textDocument: { uri: c.uri },
    range: { start: { line: 2, character: 0 }, end: { line: 2, character: 2 } },
    context: { diagnostics: [] },
  })) as CodeAction[];
  return actions.find((a) => a.kind === 'refactor');
}

function editsOf(p: ApplyWorkspaceEditParams): TextEdit[] {
  return p.edit.changes?.[Object.keys(p.edit.changes)[0]!] ?? p.edit.documentChanges?.flatMap((d) => ('edits' in d ? (d.edits as TextEdit[]) : [])) ?? [];
}

const pick = (re: RegExp) => (p: ShowMessageRequestParams) => p.actions?.find((a) => re.test(a.title)) ?? null;

let full: Client;
let editOnly: Client;
let vscodeLike: Client;
let bare: Client;

beforeAll(async () => {
  [full, editOnly, vscodeLike, bare] = await Promise.all([
    client({ capabilities: { window: { showMessage: { messageActionItem: { additionalPropertiesSupport: false } } }, workspace: { applyEdit: true } } }),
    client({ capabilities: { workspace: { applyEdit: true } } }),
    client({ capabilities: { window: { showMessage: {} }, workspace: { applyEdit: true } }, initializationOptions: { clientCommands: ['qpoint.sizeResistorForCurrent'] } }),
    client({}),
  ]);
});

afterAll(async () => {
  for (const c of [full, editOnly, vscodeLike, bare]) if (c) expect(await c.s.stop()).toBe(0);
});

describe('the sizing refactor for any LSP client', () => {
  it('registers the server command, and offers the refactor with it to a client that can be asked and applies edits', async () => {
    expect(full.s.initializeResult?.capabilities.executeCommandProvider?.commands).toContain('qpoint.server.sizeResistor');
    const action = await sizingAction(full);
    expect(action?.title).toBe('Size R1 for a target output current of Q2…');
    expect(action?.command?.command).toBe('qpoint.server.sizeResistor');
    expect(action?.command?.arguments).toEqual([{ uri: full.uri, resistor: 'R1' }]);
  });

  it('asks for the current, then for the standard value, and writes the chosen value through workspace/applyEdit', async () => {
    const action = (await sizingAction(full))!;
    full.answers.push(pick(/^1 mA$/), (p) => p.actions![0]!);
    const result = (await full.s.connection.sendRequest(ExecuteCommandRequest.type, { command: action.command!.command, arguments: action.command!.arguments })) as {
      applied: boolean;
      value: string;
      message: string;
    };
    // First question: the present output current, and round targets around it.
    const [first, second] = full.asked;
    const now = /It carries ([\d.]+) µA now/.exec(first!.message);
    expect(first!.message).toMatch(/^Size R1 for which current of Q2\?/);
    // The solve and the hand formula share the model, so they agree closely (3 %, the formula neglects nothing else at VAF = ∞).
    expect(Math.abs((Number(now?.[1]) * 1e-6) / handIout(6.8e3) - 1)).toBeLessThan(0.03);
    expect(first!.actions!.map((a) => a.title)).toContain('1 mA');
    // Second question: the two E24 neighbours (IEC 60063) of the exact value the hand formula gives for 1 mA.
    const rIdeal = (5 - VT * Math.log(1.02e-3 / 1e-16)) / 1.02e-3; // ≈ 4.14 kΩ
    const exact = /exactly ([\d.]+) kΩ/.exec(second!.message);
    expect(Math.abs(Number(exact?.[1]) * 1e3 / rIdeal - 1)).toBeLessThan(0.03);
    expect(second!.actions!.map((a) => a.title.split(' ')[0]).sort()).toEqual(['3.9k', '4.3k']);
    // The edit: one change of the value field of R1, for the open version of the document.
    expect(result.applied).toBe(true);
    expect(full.applied.length).toBe(1);
    const edits = editsOf(full.applied[0]!);
    expect(edits.length).toBe(1);
    const after = TextDocument.applyEdits(TextDocument.create(full.uri, 'netlist', 1, TEXT), edits);
    expect(after.split('\n')[2]).toBe(`R1 vcc b ${result.value}`);
    expect(Math.abs(handIout(ohms(result.value)) / 1e-3 - 1)).toBeLessThan(0.1);
    expect(full.told.at(-1)).toMatch(new RegExp(`^Set R1 to ${result.value.replace('.', '\\.')} \\(E24\\) → `));
  });

  it('changes nothing when the user dismisses the question', async () => {
    const before = full.applied.length;
    full.answers.push(() => null);
    const result = (await full.s.connection.sendRequest(ExecuteCommandRequest.type, { command: 'qpoint.server.sizeResistor', arguments: [{ uri: full.uri, resistor: 'R1' }] })) as { applied: boolean; message: string };
    expect(result).toEqual({ applied: false, message: 'Sizing R1 was cancelled; nothing was changed.' });
    expect(full.applied.length).toBe(before);
  });

  it('takes the target (and the value) as arguments, applying the nearest candidate when the client cannot be asked', async () => {
    // Not offered as a code action (the target could not be asked for) …
    expect(await sizingAction(editOnly)).toBeUndefined();
    // … but runnable with the target given. For 500 µA the hand formula wants ≈ 8.32 kΩ: E24 8.2k (−1.4 %) is nearer than 9.1k.
    const result = (await editOnly.s.connection.sendRequest(ExecuteCommandRequest.type, {
      command: 'qpoint.server.sizeResistor',
      arguments: [{ uri: editOnly.uri, resistor: 'R1', target: '500u' }],
    })) as { applied: boolean; value: string };
    expect(result.applied).toBe(true);
    expect(result.value).toBe('8.2k');
    expect(editsOf(editOnly.applied[0]!).map((e) => e.newText)).toEqual(['8.2k']);
    // A value that is not a candidate is refused, naming the candidates.
    await expect(
      editOnly.s.connection.sendRequest(ExecuteCommandRequest.type, { command: 'qpoint.server.sizeResistor', arguments: [{ uri: editOnly.uri, resistor: 'R1', target: '500u', value: '1k' }] }),
    ).rejects.toThrow(/1k is not a candidate for R1 at 500u; the candidates are .*8\.2k/);
    // Without a target it says what to send.
    await expect(editOnly.s.connection.sendRequest(ExecuteCommandRequest.type, { command: 'qpoint.server.sizeResistor', arguments: [{ uri: editOnly.uri, resistor: 'R1' }] })).rejects.toThrow(
      /cannot be asked for the target current .*give it as the argument's target/,
    );
  });

  it('gives a client that runs the sizing itself its own command, and a client that can do neither no refactor', async () => {
    const own = await sizingAction(vscodeLike);
    expect(own?.command?.command).toBe('qpoint.sizeResistorForCurrent');
    expect(await sizingAction(bare)).toBeUndefined();
    await expect(bare.s.connection.sendRequest(ExecuteCommandRequest.type, { command: 'qpoint.server.sizeResistor', arguments: [{ uri: bare.uri, resistor: 'R1', target: '1m' }] })).rejects.toThrow(
      /cannot apply edits the server sends/,
    );
  });
});

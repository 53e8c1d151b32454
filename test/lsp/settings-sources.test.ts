// The built language server over stdio: the qpoint settings arrive in one shape from each of the three LSP sources
// (initializationOptions.qpoint, a workspace/configuration answer, didChangeConfiguration's settings.qpoint).

import { afterEach, describe, expect, it } from 'vitest';
import { DidChangeConfigurationNotification, type Diagnostic } from 'vscode-languageserver-protocol/node';
import { startServer, type ServerSession, type StartOptions } from './lsp-client';

// A node reached by one terminal only: the server warns `node-single-connection` on it (README, finding codes).
const NETLIST = 'Dangling node\nV1 a 0 DC 1\nR1 a b 1k\nR2 a 0 1k\n.end\n';
const CODE = 'node-single-connection';
let n = 0;
const sessions: ServerSession[] = [];

afterEach(async () => {
  for (const s of sessions.splice(0)) expect(await s.stop()).toBe(0);
});

/** Starts a server with `options`, opens the netlist and returns the session and a reader of the finding's latest diagnostic. */
async function start(options: StartOptions) {
  const s = await startServer(options);
  sessions.push(s);
  const uri = `file:///settings-${++n}.cir`;
  const finding = (): Diagnostic | undefined => s.diagnosticsOf(uri).find((d) => d.code === CODE);
  const published = () => s.publishCount.get(uri) ?? 0;
  s.open(uri, NETLIST);
  return { s, uri, finding, published };
}

/** Waits until the finding is published with `severity` (1 error, 2 warning), or until a publication without it when `severity` is 'absent'. */
async function check(ctx: Awaited<ReturnType<typeof start>>, severity: number | 'absent', after = 0): Promise<void> {
  await ctx.s.waitFor(`${CODE} ${severity === 'absent' ? 'hidden' : `at severity ${severity}`}`, () => {
    if (ctx.published() <= after) return false;
    const d = ctx.finding();
    return severity === 'absent' ? d === undefined : d?.severity === severity;
  });
}

describe('settings from initializationOptions', () => {
  it('reads initializationOptions.qpoint, nested or with dotted keys, from a client that cannot be asked', async () => {
    const nested = await start({ pullConfiguration: false, initializationOptions: { qpoint: { findingSeverity: { [CODE]: 'error' }, analysisDelayMs: 0 } } });
    await check(nested, 1);
    const dotted = await start({ pullConfiguration: false, initializationOptions: { qpoint: { [`findingSeverity.${CODE}`]: 'off', 'corners.enabled': false } } });
    await dotted.s.waitFor('a publication', () => dotted.published() > 0);
    expect(dotted.finding()).toBeUndefined();
  });

  it('says in the log that initializationOptions.settings is not read, and where the settings go', async () => {
    const ctx = await start({ pullConfiguration: false, initializationOptions: { settings: { findingSeverity: { [CODE]: 'error' } } } });
    await check(ctx, 2);
    expect(ctx.s.logs.join('\n')).toMatch(/initializationOptions\.settings is not read; send the qpoint settings as initializationOptions\.qpoint/);
  });

  it('logs a bad value with the source it came from and keeps the rest', async () => {
    const ctx = await start({ pullConfiguration: false, initializationOptions: { qpoint: { resistorSeries: 'E7', findingSeverity: { [CODE]: 'error' } } } });
    await check(ctx, 1);
    expect(ctx.s.logs.join('\n')).toMatch(/qpoint\.resistorSeries = "E7" is ignored.*\(from initializationOptions\)/);
  });
});

describe('settings pulled with workspace/configuration', () => {
  it('asks a client that can answer, and applies its section', async () => {
    const ctx = await start({ settings: { findingSeverity: { [CODE]: 'error' } } });
    await check(ctx, 1);
  });

  it('keeps the initializationOptions values where the client has no qpoint section, and lays the section over them key by key', async () => {
    const ctx = await start({ settings: null, initializationOptions: { qpoint: { findingSeverity: { [CODE]: 'error' } } } });
    await check(ctx, 1);
    // The section names another code only: the starting value for CODE stays.
    ctx.s.section = { findingSeverity: { 'model-not-found': 'hint' } };
    const before = ctx.published();
    await ctx.s.connection.sendNotification(DidChangeConfigurationNotification.type, { settings: null });
    await check(ctx, 1, before);
    // Now the section sets CODE itself: the client's value wins.
    ctx.s.section = { findingSeverity: { [CODE]: 'off' } };
    const later = ctx.published();
    await ctx.s.connection.sendNotification(DidChangeConfigurationNotification.type, { settings: null });
    await check(ctx, 'absent', later);
  });

  it('asks again on didChangeConfiguration even when the notification carries nothing (as VS Code and Neovim send it)', async () => {
    const ctx = await start({ settings: {} });
    await check(ctx, 2);
    ctx.s.section = { findingSeverity: { [CODE]: 'error' } };
    const before = ctx.published();
    await ctx.s.connection.sendNotification(DidChangeConfigurationNotification.type, { settings: {} });
    await check(ctx, 1, before);
  });
});

describe('settings pushed with didChangeConfiguration', () => {
  it('reads settings.qpoint from a client that cannot be asked, and a push without it goes back to the starting values', async () => {
    const ctx = await start({ pullConfiguration: false, initializationOptions: { qpoint: { findingSeverity: { [CODE]: 'error' } } } });
    await check(ctx, 1);
    let before = ctx.published();
    await ctx.s.connection.sendNotification(DidChangeConfigurationNotification.type, { settings: { qpoint: { findingSeverity: { [CODE]: 'off' } } } });
    await check(ctx, 'absent', before);
    before = ctx.published();
    await ctx.s.connection.sendNotification(DidChangeConfigurationNotification.type, { settings: { other: { x: 1 } } });
    await check(ctx, 1, before);
    // The same shape with dotted keys.
    before = ctx.published();
    await ctx.s.connection.sendNotification(DidChangeConfigurationNotification.type, { settings: { qpoint: { [`findingSeverity.${CODE}`]: 'hint' } } });
    await check(ctx, 4, before);
  });
});

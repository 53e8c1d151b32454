// A second LSP editor: Debian's Neovim, headless, with the configuration the README gives (docs/editors/neovim.lua),
// against the built server. It opens a netlist, gets diagnostics (with a setting from the configuration applied), hovers a
// transistor, applies the sizing code action through Neovim's own menu, and leaves a .net file of another format alone.

import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';

const ROOT = resolve(__dirname, '../..');
const SERVER = join(ROOT, 'dist', 'server.js');
const CONFIG = join(ROOT, 'docs', 'editors', 'neovim.lua');
const DRIVER = join(__dirname, 'drive.lua');

const version = spawnSync('nvim', ['--version'], { encoding: 'utf8' });
const haveNeovim = version.status === 0;
if (!haveNeovim) {
  // .ci/run installs Debian's neovim before the tests, so in CI a missing nvim is a failure (below), never a skip.
  console.warn('qpoint: Neovim (nvim) is not installed, so test/neovim is skipped here. Install it with `apt-get install -y neovim` to run it; CI installs it.');
}

// A simple NPN mirror (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4): IREF = (VCC − VBE)/R1, IOUT = IREF/(1 + 2/β), with a
// target on the output that 6.8 kΩ misses by far.
const NETLIST = '5 V mirror with a target\nVCC vcc 0 DC 5\nR1 vcc b 6.8k\nQ1 b b 0 qn\nQ2 out b 0 qn ; expect 1mA ±5%\nRL vcc out 2k\n.model qn npn (IS=1e-16 BF=100)\n.end\n';
// Another tool's netlist with the same extension: an s-expression file of our own invention.
const OTHER = '(board-netlist (format 2)\n  (parts (part (ref R1) (value 10k)))\n  (nets (net GND (pin R1 2))))\n';
const VT = 0.025852; // kT/q at 27 °C (CODATA constants)
/** IOUT of the mirror for a reference resistor, by the hand formula, VBE = VT·ln(IC/IS) by fixed-point iteration. */
function handIout(r: number): number {
  let i = 1e-3;
  for (let k = 0; k < 50; k++) i = (5 - VT * Math.log(i / 1e-16)) / r / 1.02;
  return i;
}

interface Diag { line: number; code: string; severity: number; message: string }
interface Outcome {
  error?: string;
  steps: string[];
  filetype: string;
  diagnostics: Diag[];
  hover?: string;
  menu?: string[];
  asked: { message: string; actions: string[] }[];
  told: string[];
  after?: string;
  diagnosticsAfter?: Diag[];
  other?: { filetype: string; clients: number };
}

const dir = mkdtempSync(join(tmpdir(), 'qpoint-nvim-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('Neovim as the LSP client', () => {
  it('runs here, or CI is missing the Neovim it installs', () => {
    if (process.env['CI'] === 'true') expect(haveNeovim, 'CI must run the Neovim test: .ci/run installs Debian\'s neovim, but nvim is not on PATH').toBe(true);
  });

  it.skipIf(!haveNeovim)('opens a netlist, shows diagnostics and hover, and applies the sizing code action', () => {
    writeFileSync(join(dir, 'mirror.cir'), NETLIST);
    writeFileSync(join(dir, 'board.net'), OTHER);
    const outFile = join(dir, 'out.json');
    const run = spawnSync(
      'nvim',
      [
        '--headless',
        '--clean',
        '-c',
        // The README's knobs: where the server is, and settings (target-missed shown as a hint, which proves they reached the server).
        "lua vim.g.qpoint_server_cmd = { vim.env.QPOINT_NODE, vim.env.QPOINT_SERVER, '--stdio' }; vim.g.qpoint_settings = { findingSeverity = { ['target-missed'] = 'hint' } }",
        '-c',
        `luafile ${CONFIG}`,
        '-c',
        `luafile ${DRIVER}`,
      ],
      {
        cwd: dir,
        encoding: 'utf8',
        timeout: 90_000,
        env: { ...process.env, QPOINT_NODE: process.execPath, QPOINT_SERVER: SERVER, QPOINT_NVIM_NETLIST: join(dir, 'mirror.cir'), QPOINT_NVIM_OTHER: join(dir, 'board.net'), QPOINT_NVIM_OUT: outFile },
      },
    );
    let outcome: Outcome;
    try {
      outcome = JSON.parse(readFileSync(outFile, 'utf8')) as Outcome;
    } catch {
      throw new Error(`Neovim wrote no result (exit ${run.status}, signal ${run.signal}).\nstdout: ${run.stdout}\nstderr: ${run.stderr}`);
    }
    expect(outcome.error, `steps done: ${outcome.steps.join(', ')}`).toBeUndefined();
    expect(outcome.filetype).toBe('spice');

    // Diagnostics: the missed target on Q2's line (0-based 4), at the severity the configuration's settings ask for (4 = hint).
    const missed = outcome.diagnostics.filter((d) => d.code === 'target-missed');
    expect(missed.map((d) => [d.line, d.severity])).toEqual([[4, 4]]);
    const carried = Number(/Q2 carries ([\d.]+) µA/.exec(missed[0]!.message)?.[1]) * 1e-6;
    expect(Math.abs(carried / handIout(6.8e3) - 1)).toBeLessThan(0.03);

    // Hover: Q2's record, with its collector current agreeing with the hand formula.
    expect(outcome.hover).toMatch(/\*\*Q2\*\*/);
    const ic = Number(/IC ([\d.]+) µA/.exec(outcome.hover ?? '')?.[1]) * 1e-6;
    expect(Math.abs(ic / handIout(6.8e3) - 1)).toBeLessThan(0.03);

    // The code action, from Neovim's own menu: the server asked for the current (1 mA picked) and the value (first picked).
    expect(outcome.menu).toContain('Size R1 for a target output current of Q2…');
    expect(outcome.asked[0]!.message).toMatch(/^Size R1 for which current of Q2\?/);
    expect(outcome.asked[0]!.actions).toContain('1 mA');
    // For 1 mA the E24 neighbours (IEC 60063) of the exact value are 3.9k and 4.3k; the nearer in current comes first.
    const err = (r: number) => Math.abs(handIout(r) / 1e-3 - 1);
    const nearer = err(4.3e3) < err(3.9e3) ? '4.3k' : '3.9k';
    expect(outcome.asked[1]!.actions[0]!.split(' ')[0]).toBe(nearer);
    expect(outcome.after).toBe(`R1 vcc b ${nearer}`);
    expect(outcome.told.at(-1)).toMatch(new RegExp(`^Set R1 to ${nearer.replace('.', '\\.')} `));
    // Neovim sent the edit on to the server, whose new findings no longer miss the ±5 % target (hand: within it).
    expect(err(nearer === '4.3k' ? 4.3e3 : 3.9e3)).toBeLessThan(0.05);
    expect(outcome.diagnosticsAfter?.filter((d) => d.code === 'target-missed')).toEqual([]);

    // The s-expression .net file is not taken for a netlist: no language, no client.
    expect(outcome.other).toEqual({ filetype: expect.not.stringMatching(/^spice$/), clients: 0 });
  }, 120_000);
});

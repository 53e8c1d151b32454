// The real-editor test: packages the extension, loads it into VS Code (code-server) in headless Chromium, and checks colouring, hover, diagnostics and a quick fix on the demo netlist.
import { spawn } from 'node:child_process';
import { cpSync, createWriteStream, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { ensureEditor, progress, runStep, StepError } from './install-editor.mjs';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
const OUT = join(ROOT, 'test-output', 'editor');
const DEMO = 'sensor-bias.cir';
const CORNER_FILE = 'corner-switch.cir';
/** An invented divider whose `.if` branch (the 9k resistor) is not taken with corner=2. */
const CORNER_TEXT = [
  'Reference divider with a corner switch',
  '.param corner=2',
  '.if (corner == 1)',
  'R2 mid 0 9k',
  '.else',
  'R2 mid 0 10k',
  '.endif',
  'V1 top 0 10',
  'R1 top mid 10k',
  '.end',
  '',
].join('\n');
const SECOND = 1000;

/** Outcome of every check, printed at the end. */
const results = [];
let shotCount = 0;

function record(name, ok, detail) {
  results.push({ name, ok, detail });
  process.stdout.write(`${ok ? 'PASS' : 'FAIL'} ${name}${detail ? ` — ${detail}` : ''}\n`);
}

/** Runs one check; a thrown error fails the check with its message, never the whole run. */
async function check(name, fn) {
  const t0 = Date.now();
  const took = () => `${((Date.now() - t0) / SECOND).toFixed(1)} s`;
  try {
    const detail = await fn();
    record(name, true, `${typeof detail === 'string' ? detail + '; ' : ''}${took()}`);
    return true;
  } catch (e) {
    record(name, false, `${e instanceof Error ? e.message : String(e)}; ${took()}`);
    return false;
  }
}

/** Polls `probe` until it returns a truthy value or `timeoutMs` passes; then throws `message`. */
async function until(probe, { timeoutMs, intervalMs = 250, message }) {
  const deadline = Date.now() + timeoutMs;
  let last;
  while (Date.now() < deadline) {
    try {
      last = await probe();
      if (last) return last;
    } catch (e) {
      last = e;
    }
    await sleep(intervalMs);
  }
  const why = last instanceof Error ? ` (last error: ${last.message})` : '';
  throw new Error(`${message} after ${Math.round(timeoutMs / SECOND)} s${why}`);
}

function sleep(ms) {
  return new Promise((r) => setTimeout(r, ms));
}

/** Rejects with `message` when `promise` takes longer than `ms`. */
function withTimeout(promise, ms, message) {
  let timer;
  return Promise.race([
    promise.finally(() => clearTimeout(timer)),
    new Promise((_, reject) => {
      timer = setTimeout(() => reject(new Error(`${message} (no result after ${Math.round(ms / SECOND)} s)`)), ms);
    }),
  ]);
}

function freePort() {
  return new Promise((resolvePort, reject) => {
    const srv = createServer();
    srv.unref();
    srv.on('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const { port } = srv.address();
      srv.close(() => resolvePort(port));
    });
  });
}

async function screenshot(page, name) {
  shotCount++;
  const file = join(OUT, `${String(shotCount).padStart(2, '0')}-${name}.png`);
  try {
    await withTimeout(page.screenshot({ path: file }), 15 * SECOND, `screenshot ${name}`);
    progress(`screenshot ${file}`);
  } catch (e) {
    progress(`could not save screenshot ${file}: ${e.message}`);
  }
  return file;
}

/** Stops a process group started with `detached: true`: TERM, then KILL after a grace period. */
async function stopGroup(child, label) {
  if (!child || child.exitCode !== null || child.signalCode !== null) return;
  const exited = new Promise((r) => child.once('exit', r));
  try { process.kill(-child.pid, 'SIGTERM'); } catch { return; }
  const gone = await Promise.race([exited.then(() => true), sleep(5 * SECOND).then(() => false)]);
  if (!gone) {
    progress(`${label} did not stop within 5 s; killing it.`);
    try { process.kill(-child.pid, 'SIGKILL'); } catch { /* already gone */ }
    await Promise.race([exited, sleep(3 * SECOND)]);
  }
}

/** The text of each visible editor line, top to bottom (Monaco renders one `.view-line` per line). */
async function editorLines(page) {
  return page.evaluate(() => {
    const lines = [...document.querySelectorAll('.monaco-editor .view-lines .view-line')];
    return lines
      .map((el) => ({ top: parseFloat(el.style.top || '0'), text: (el.textContent ?? '').replace(/\u00a0/g, ' ') }))
      .sort((a, b) => a.top - b.top)
      .map((l) => l.text);
  });
}

/** Screen box of `word` on the first visible editor line that starts with `lineStart`. */
async function wordBox(page, lineStart, word) {
  return page.evaluate(([start, w]) => {
    for (const line of document.querySelectorAll('.monaco-editor .view-lines .view-line')) {
      const text = (line.textContent ?? '').replace(/\u00a0/g, ' ');
      if (!text.trimStart().startsWith(start)) continue;
      const at = text.indexOf(w);
      if (at < 0) continue;
      // Walk the text nodes to the word's offset; Monaco splits a line into one span per token.
      const walker = document.createTreeWalker(line, NodeFilter.SHOW_TEXT);
      let offset = 0;
      for (let n = walker.nextNode(); n; n = walker.nextNode()) {
        const len = n.textContent.length;
        if (at < offset + len) {
          const range = document.createRange();
          range.setStart(n, at - offset);
          range.setEnd(n, Math.min(len, at - offset + w.length));
          const r = range.getBoundingClientRect();
          return { x: r.left + r.width / 2, y: r.top + r.height / 2, width: r.width, height: r.height };
        }
        offset += len;
      }
    }
    return null;
  }, [lineStart, word]);
}

/** Colour of the token that holds `word` on the line that starts with `lineStart`. */
async function tokenColour(page, lineStart, word) {
  return page.evaluate(([start, w]) => {
    for (const line of document.querySelectorAll('.monaco-editor .view-lines .view-line')) {
      const text = (line.textContent ?? '').replace(/\u00a0/g, ' ');
      if (!text.trimStart().startsWith(start)) continue;
      for (const span of line.querySelectorAll('span > span')) {
        if ((span.textContent ?? '').replace(/\u00a0/g, ' ').includes(w)) return getComputedStyle(span).color;
      }
    }
    return null;
  }, [lineStart, word]);
}

async function visibleHoverText(page) {
  return page.evaluate(() => {
    const hovers = [...document.querySelectorAll('.monaco-hover:not(.hidden) .monaco-hover-content')];
    return hovers.map((h) => h.textContent ?? '').join('\n').trim();
  });
}

/** Hovers `word` on its line, moving off and back until a hover that satisfies `accept` shows (the client registers its hover late on a cold start). */
async function hoverUntil(page, lineStart, word, accept, timeoutMs) {
  let lastText = '';
  await until(async () => {
    const box = await wordBox(page, lineStart, word);
    if (!box) throw new Error(`"${word}" is not visible on a line starting with "${lineStart}"`);
    await page.mouse.move(5, 5);
    await sleep(150);
    await page.mouse.move(box.x, box.y, { steps: 4 });
    const deadline = Date.now() + 2500;
    while (Date.now() < deadline) {
      lastText = await visibleHoverText(page);
      if (lastText && accept(lastText)) return true;
      await sleep(200);
    }
    return false;
  }, { timeoutMs, intervalMs: 300, message: `no hover with the expected content on ${word} (last hover text: ${JSON.stringify(lastText.slice(0, 300))})` });
  return lastText;
}

/** Saves the active editor and waits until the file on disk differs from `previous`; returns the new text. */
async function saveAndRead(page, file, previous, what) {
  await page.keyboard.press('Control+S');
  return until(async () => {
    const now = readFileSync(file, 'utf8');
    return now !== previous ? now : null;
  }, { timeoutMs: 15 * SECOND, message: `${what}: the saved file did not change` });
}

/** Lines of `after` that are not in `before` (the cards an edit rewrote). */
function changedLines(before, after) {
  const old = new Set(before.split(/\r?\n/));
  return after.split(/\r?\n/).filter((l) => !old.has(l));
}

/** Runs a command from the command palette by its full title. */
async function runPaletteCommand(page, title) {
  await page.keyboard.press('Control+Shift+P');
  const input = await page.waitForSelector('.quick-input-widget .quick-input-box input', { timeout: 10 * SECOND });
  await input.fill(`>${title}`);
  await until(async () => page.evaluate((t) => [...document.querySelectorAll('.quick-input-list .monaco-list-row')]
    .some((r) => (r.textContent ?? '').includes(t)), title), { timeoutMs: 15 * SECOND, message: `the command palette does not list "${title}"` });
  await page.keyboard.press('Enter');
}

/** Clicks `word` on the line that starts with `lineStart`, which puts the editor cursor there. */
async function clickWord(page, lineStart, word) {
  const box = await until(() => wordBox(page, lineStart, word), { timeoutMs: 10 * SECOND, message: `"${word}" is not visible` });
  await page.mouse.click(box.x, box.y);
  await sleep(300);
}

/** Reads `IC <number> <prefix>A` from a hover and returns amperes. */
function collectorCurrent(text) {
  const m = /\bIC\s*[=:]?\s*([−-]?\d+(?:\.\d+)?(?:e[−-]?\d+)?)\s*([pnuµm]?)A\b/.exec(text);
  if (!m) return undefined;
  const scale = { p: 1e-12, n: 1e-9, u: 1e-6, 'µ': 1e-6, m: 1e-3, '': 1 }[m[2]];
  return Number(m[1].replace('−', '-')) * scale;
}

/** A rough hand estimate of the reference current, (supply − 0.7 V) / RREF, from the demo's own parameters when it has them. */
function referenceEstimate(netlist) {
  const supply = /^\s*\.param\s+vsupply\s*=\s*([\d.]+)\s*$/im.exec(netlist);
  const rref = /^\s*\.param\s+rref\s*=\s*([\d.]+)k\s*$/im.exec(netlist);
  if (!supply || !rref) return undefined;
  return (Number(supply[1]) - 0.7) / (Number(rref[1]) * 1e3);
}

/** WCAG 2.1 relative luminance of an `rgb(r, g, b)` colour (sRGB channels linearised). */
function luminance(rgb) {
  const m = /rgba?\(\s*(\d+)[ ,]+(\d+)[ ,]+(\d+)/.exec(rgb ?? '');
  if (!m) return undefined;
  const lin = (c) => {
    const s = Number(c) / 255;
    return s <= 0.04045 ? s / 12.92 : ((s + 0.055) / 1.055) ** 2.4;
  };
  return 0.2126 * lin(m[1]) + 0.7152 * lin(m[2]) + 0.0722 * lin(m[3]);
}

/** WCAG 2.1 contrast ratio (L1 + 0.05)/(L2 + 0.05) of two colours; NaN when either cannot be read. */
function contrastRatio(a, b) {
  const la = luminance(a);
  const lb = luminance(b);
  if (la === undefined || lb === undefined) return NaN;
  return (Math.max(la, lb) + 0.05) / (Math.min(la, lb) + 0.05);
}

/** The output-characteristic chart of `device` in any webview frame, read as the user sees it; null while there is none. */
async function chartIn(page, device) {
  for (const frame of page.frames()) {
    const info = await frame.evaluate((d) => {
      const svg = document.querySelector('svg.qp-chart');
      const title = document.querySelector('h1')?.textContent ?? '';
      if (!svg || !title.includes(d)) return null;
      const curve = svg.querySelector('.qp-curve');
      return {
        title,
        edge: !!svg.querySelector('.qp-edge'),
        sides: [...svg.querySelectorAll('.qp-region-outside')].map((r) => (r.classList.contains('qp-left') ? 'left' : r.classList.contains('qp-right') ? 'right' : '?')),
        operating: svg.querySelector('.qp-operating')?.getAttribute('data-amps') ?? null,
        tabindex: svg.getAttribute('tabindex'),
        ticks: svg.querySelectorAll('.qp-tick-label').length,
        corners: document.querySelectorAll('.qp-corners tbody tr').length,
        text: svg.textContent ?? '',
        stroke: curve ? getComputedStyle(curve).stroke : '',
        background: getComputedStyle(document.body).backgroundColor,
      };
    }, device).catch(() => null);
    if (info) return { ...info, contrast: contrastRatio(info.stroke, info.background) };
  }
  return null;
}

async function main() {
  const started = Date.now();
  rmSync(OUT, { recursive: true, force: true });
  mkdirSync(OUT, { recursive: true });
  const logFile = join(OUT, 'setup.log');

  const editor = await ensureEditor({ logFile });
  const setupDone = Date.now();

  // QPOINT_EDITOR_VSIX tests an already packaged extension (for example a release candidate) instead of packaging one.
  let vsix = process.env.QPOINT_EDITOR_VSIX ? resolve(process.env.QPOINT_EDITOR_VSIX) : join(ROOT, 'dist', 'qpoint.vsix');
  if (process.env.QPOINT_EDITOR_VSIX) {
    if (!existsSync(vsix)) throw new StepError('Reading QPOINT_EDITOR_VSIX', `${vsix} does not exist.`);
    progress(`testing the packaged extension ${vsix}.`);
  } else {
    progress('building and packaging the extension (npm run package)...');
    rmSync(vsix, { force: true });
    await runStep('npm run package', 'npm', ['run', 'package'], { cwd: ROOT, timeoutMs: 5 * 60 * SECOND, logFile });
    if (!existsSync(vsix)) throw new StepError('npm run package', `${vsix} was not produced.`);
  }

  const work = mkdtempSync(join(tmpdir(), 'qpoint-editor-'));
  const userData = join(work, 'user-data');
  const extensions = join(work, 'extensions');
  const browserProfile = join(work, 'browser');
  const workspace = join(work, 'workspace');
  const xdg = join(work, 'xdg');
  for (const d of [userData, extensions, browserProfile, xdg, join(userData, 'User')]) mkdirSync(d, { recursive: true });
  cpSync(join(ROOT, 'examples'), workspace, { recursive: true });
  if (!existsSync(join(workspace, DEMO))) throw new StepError('Preparing the workspace', `examples/${DEMO} does not exist.`);
  // A netlist with a corner switch: its `.if` branch is not taken, so the editor must show it faded.
  writeFileSync(join(workspace, CORNER_FILE), CORNER_TEXT);
  const demoFile = join(workspace, DEMO);
  const demoText = readFileSync(demoFile, 'utf8');
  // Two .net files: a SPICE-style netlist (claimed) and another tool's s-expression netlist (left alone); both invented here.
  const NET_FILES = {
    'bias-cell.net': 'Bias cell saved with a .net name\nVCC vcc 0 DC 5\nR1 vcc b 4.3k\nQ1 b b 0 qn\nQ2 out b 0 qn\nRL vcc out 2k\n.model qn npn (IS=1e-16 BF=100)\n.end\n',
    'board-wiring.net': '(board-netlist (format 2)\n  (parts (part (ref R1) (value 10k)))\n  (nets (net GND (pin R1 2))))\n',
  };
  for (const [name, text] of Object.entries(NET_FILES)) writeFileSync(join(workspace, name), text);
  let currentText = demoText;
  const configFile = join(work, 'code-server.yaml');
  writeFileSync(configFile, 'auth: none\ncert: false\n');
  writeFileSync(join(userData, 'User', 'settings.json'), JSON.stringify({
    'workbench.startupEditor': 'none',
    'workbench.tips.enabled': false,
    'workbench.enableExperiments': false,
    'telemetry.telemetryLevel': 'off',
    'update.mode': 'none',
    'extensions.autoCheckUpdates': false,
    'extensions.autoUpdate': false,
    'security.workspace.trust.enabled': false,
    'editor.hover.delay': 150,
    'editor.minimap.enabled': false,
    'window.restoreWindows': 'none',
  }, null, 2));
  const env = {
    ...process.env,
    XDG_CONFIG_HOME: join(xdg, 'config'),
    XDG_DATA_HOME: join(xdg, 'data'),
    XDG_CACHE_HOME: join(xdg, 'cache'),
    // Points the marketplace at a closed loopback port so nothing reaches out.
    EXTENSIONS_GALLERY: JSON.stringify({ serviceUrl: 'http://127.0.0.1:9/gallery', itemUrl: 'http://127.0.0.1:9/item' }),
  };
  const commonArgs = ['--config', configFile, '--user-data-dir', userData, '--extensions-dir', extensions];

  progress('installing the .vsix into a fresh extensions folder...');
  await runStep('Installing the .vsix', process.execPath, [editor.entry, ...commonArgs, '--install-extension', vsix, '--force'], { env, timeoutMs: 2 * 60 * SECOND, logFile });

  const port = await freePort();
  const serverLog = createWriteStream(join(OUT, 'code-server.log'));
  let server;
  let context;
  try {
    progress(`starting code-server on 127.0.0.1:${port}...`);
    server = spawn(process.execPath, [
      editor.entry, ...commonArgs,
      '--bind-addr', `127.0.0.1:${port}`, '--auth', 'none',
      '--disable-telemetry', '--disable-update-check', '--disable-workspace-trust',
      '--disable-getting-started-override', '--ignore-last-opened', workspace,
    ], { env, detached: true, stdio: ['ignore', 'pipe', 'pipe'] });
    liveServer = server;
    server.stdout.pipe(serverLog);
    server.stderr.pipe(serverLog);
    let serverExit;
    server.once('exit', (code, signal) => { serverExit = signal ?? `code ${code}`; });
    await until(async () => {
      if (serverExit) throw new StepError('Starting code-server', `it exited with ${serverExit}; see ${join(OUT, 'code-server.log')}.`);
      const r = await fetch(`http://127.0.0.1:${port}/healthz`, { signal: AbortSignal.timeout(2000) }).catch(() => undefined);
      return r && r.ok;
    }, { timeoutMs: 60 * SECOND, intervalMs: 250, message: 'code-server did not answer /healthz' }).catch((e) => {
      if (e instanceof StepError) throw e;
      throw new StepError('Starting code-server', e.message);
    });
    progress(`code-server is up (${((Date.now() - setupDone) / SECOND).toFixed(1)} s after setup).`);

    const { chromium } = await import('playwright-core');
    context = await withTimeout(chromium.launchPersistentContext(browserProfile, {
      executablePath: editor.chromium,
      headless: true,
      viewport: { width: 1400, height: 900 },
      args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    }), 60 * SECOND, 'launching chromium');
    context.setDefaultTimeout(30 * SECOND);
    await context.route('**/*', (route) => {
      const url = new URL(route.request().url());
      if (url.hostname === '127.0.0.1' || url.protocol === 'data:' || url.protocol === 'blob:') return route.continue();
      return route.abort();
    });
    const page = context.pages()[0] ?? await context.newPage();
    const pageErrors = [];
    page.on('pageerror', (e) => pageErrors.push(e.message));

    await page.goto(`http://127.0.0.1:${port}/?folder=${encodeURIComponent(workspace)}`, { waitUntil: 'domcontentloaded', timeout: 60 * SECOND });
    await page.waitForSelector('.monaco-workbench', { timeout: 60 * SECOND });
    progress(`the workbench is up (${((Date.now() - setupDone) / SECOND).toFixed(1)} s after setup).`);

    const titleLine = demoText.split(/\r?\n/)[0].trim();
    const opened = await check(`opens examples/${DEMO} in the editor`, async () => {
      const shown = async () => (await editorLines(page)).some((l) => l.trim().startsWith(titleLine.slice(0, 30)));
      await until(async () => {
        // Quick Open (Ctrl+P) by file name, as a user would; retried because the file index fills in after start-up.
        await page.keyboard.press('Control+P');
        const input = await page.waitForSelector('.quick-input-widget .quick-input-box input', { timeout: 5 * SECOND });
        await input.fill(DEMO);
        const listed = await until(async () => page.evaluate((name) => [...document.querySelectorAll('.quick-input-list .monaco-list-row')]
          .some((r) => (r.textContent ?? '').includes(name)), DEMO), { timeoutMs: 4 * SECOND, intervalMs: 200, message: 'not listed' }).catch(() => false);
        if (!listed) {
          await page.keyboard.press('Escape');
          return false;
        }
        await page.keyboard.press('Enter');
        return until(shown, { timeoutMs: 8 * SECOND, message: 'the file did not show' }).catch(() => false);
      }, { timeoutMs: 60 * SECOND, intervalMs: 500, message: `the editor did not show the first line "${titleLine}"` });
      return `title line "${titleLine}" visible`;
    });
    await screenshot(page, 'opened');
    if (!opened) return;

    await check('the editor uses the netlist language from the extension', async () => {
      const mode = await until(async () => page.evaluate(() => {
        const items = [...document.querySelectorAll('.statusbar-item')].map((e) => (e.textContent ?? '').trim());
        return items.find((t) => /netlist/i.test(t));
      }), { timeoutMs: 20 * SECOND, message: 'the status bar shows no netlist language mode' });
      return `status bar language mode "${mode}"`;
    });

    await check('the grammar colours comments, element names and numbers differently', async () => {
      const comment = demoText.split(/\r?\n/).find((l) => /^\*\s+\S/.test(l));
      const element = demoText.split(/\r?\n/).find((l) => /^R\w*\s+\S+\s+\S+\s+\d/i.test(l));
      if (!comment || !element) throw new Error('the demo netlist has no comment line or resistor with a numeric value to compare');
      const [name, , , value] = element.trim().split(/\s+/);
      // Tokenising can finish after the text shows, so poll until the three colours differ.
      let colours = null;
      await until(async () => {
        const c = await tokenColour(page, comment.slice(0, 12), comment.slice(2, 8));
        const e = await tokenColour(page, name, name);
        const v = await tokenColour(page, name, value);
        colours = { c, e, v };
        return c && e && v && new Set([c, e, v]).size === 3;
      }, { timeoutMs: 30 * SECOND, intervalMs: 500, message: 'the comment, element name and number did not get three different colours' }).catch((err) => {
        throw new Error(`${err.message}; last seen: comment ${colours?.c}, element ${colours?.e}, number ${colours?.v}`);
      });
      return `comment ${colours.c}, ${name} ${colours.e}, ${value} ${colours.v}`;
    });

    let markerTexts = [];
    // The findings come when the first analysis has finished, so this also tells the hover check the server is ready.
    const problems = await check('the Problems panel lists a qpoint finding with its code', async () => {
      await page.keyboard.press('Control+Shift+M');
      markerTexts = await until(async () => {
        const rows = await page.evaluate(() => [...document.querySelectorAll('.markers-panel .monaco-list-row')].map((r) => (r.textContent ?? '').trim()));
        const ours = rows.filter((t) => /qpoint/i.test(t));
        return ours.length > 0 ? ours : null;
      }, { timeoutMs: 60 * SECOND, intervalMs: 500, message: 'no qpoint diagnostic appeared in the Problems panel' });
      const withCode = markerTexts.find((t) => /\(?[a-z]+(?:-[a-z0-9]+)+\)?/.test(t));
      if (!withCode) throw new Error(`no finding code (kebab-case) in: ${markerTexts.join(' | ')}`);
      await screenshot(page, 'problems');
      return `${markerTexts.length} qpoint row(s); first: ${markerTexts[0].slice(0, 160)}`;
    });

    // Close the panel so the hovered line stays where it is.
    await page.keyboard.press('Control+J');
    // Hover a mirror output transistor: the first Q card that is not diode-connected.
    const qLine = demoText.split(/\r?\n/).find((l) => {
      const f = l.trim().split(/\s+/);
      return /^Q/i.test(f[0] ?? '') && f.length >= 5 && f[1] !== f[2];
    });
    const qName = qLine?.trim().split(/\s+/)[0];
    await check(`hovering ${qName ?? 'a transistor'} shows its collector current`, async () => {
      if (!qName) throw new Error(`examples/${DEMO} has no BJT output card to hover`);
      const text = await hoverUntil(page, qName + ' ', qName, (t) => collectorCurrent(t) !== undefined, 90 * SECOND).catch(async (e) => {
        await screenshot(page, 'hover-missing');
        throw e;
      });
      const ic = collectorCurrent(text);
      if (!(Number.isFinite(ic) && ic > 0)) throw new Error(`the collector current ${ic} A is not a positive number`);
      const estimate = referenceEstimate(demoText);
      if (estimate !== undefined && (ic < estimate / 2 || ic > estimate * 2)) {
        throw new Error(`IC = ${ic} A is not within a factor of two of the hand estimate (supply − 0.7 V)/RREF = ${estimate.toExponential(3)} A`);
      }
      await screenshot(page, 'hover');
      return `IC = ${(ic * 1e3).toFixed(4)} mA${estimate !== undefined ? ` (hand estimate of IREF ${(estimate * 1e3).toFixed(3)} mA)` : ''}`;
    });
    await page.mouse.move(5, 5);
    await page.keyboard.press('Escape');

    await check('a quick fix from Ctrl+. changes the netlist text', async () => {
      if (!problems) throw new Error('no qpoint diagnostic to fix');
      await page.keyboard.press('Control+Shift+M');
      const before = (await editorLines(page)).join('\n');
      const rows = await page.$$('.markers-panel .monaco-list-row');
      const tried = [];
      for (const row of rows.slice(0, 8)) {
        const rowText = ((await row.textContent()) ?? '').trim();
        if (!/qpoint/i.test(rowText)) continue;
        // Opening a marker puts the editor cursor on the finding.
        await row.dblclick();
        await sleep(500);
        await page.keyboard.press('Control+.');
        const menu = await page.waitForSelector('.action-widget .monaco-list-row', { timeout: 5 * SECOND }).catch(() => null);
        if (!menu) {
          tried.push(`${rowText.slice(0, 60)}: no code action menu`);
          await page.keyboard.press('Escape');
          continue;
        }
        const items = await page.evaluate(() => [...document.querySelectorAll('.action-widget .monaco-list-row.action')].map((r) => ({
          text: (r.textContent ?? '').trim(),
          disabled: r.classList.contains('option-disabled') || r.getAttribute('aria-disabled') === 'true',
        })));
        const fixIndex = items.findIndex((i) => !i.disabled && !/^(size|plot|learn|configure|disable|ignore)/i.test(i.text));
        if (fixIndex < 0) {
          tried.push(`${rowText.slice(0, 60)}: only ${items.map((i) => i.text).join(', ')}`);
          await page.keyboard.press('Escape');
          continue;
        }
        await screenshot(page, 'quick-fix-menu');
        const chosen = items[fixIndex].text;
        // The menu focuses the first action; step down to the chosen one.
        for (let k = 0; k < fixIndex; k++) await page.keyboard.press('ArrowDown');
        await page.keyboard.press('Enter');
        await until(async () => (await editorLines(page)).join('\n') !== before, { timeoutMs: 15 * SECOND, message: `applying "${chosen}" did not change the editor text` });
        await screenshot(page, 'quick-fix-applied');
        const saved = await saveAndRead(page, demoFile, demoText, `applying "${chosen}"`);
        const changed = changedLines(demoText, saved);
        // A resistor fix names the value it writes ("Set RREF to 25.5k …"); that value must now be in the netlist.
        const value = /\bto\s+([0-9][0-9.]*[a-zA-Z]*)/.exec(chosen)?.[1];
        if (value && !changed.some((l) => l.includes(value))) throw new Error(`"${chosen}" was applied but no changed line contains ${value}: ${changed.join(' | ')}`);
        currentText = saved;
        return `applied "${chosen}"; changed line(s): ${changed.map((l) => l.trim()).join(' | ').slice(0, 200)}`;
      }
      throw new Error(`no qpoint diagnostic offered a quick fix (${tried.join('; ') || 'no rows'})`);
    });

    await check('the saturated mirror output offers its load-resistor fix, and applying it clears the finding', async () => {
      await page.keyboard.press('Escape');
      await page.keyboard.press('Control+Shift+M');
      const row = await until(async () => {
        for (const r of await page.$$('.markers-panel .monaco-list-row')) {
          if (/mirror-output-out-of-region/.test((await r.textContent()) ?? '')) return r;
        }
        return null;
      }, { timeoutMs: 60 * SECOND, intervalMs: 500, message: 'the Problems panel shows no mirror-output-out-of-region finding' });
      await row.dblclick();
      await sleep(500);
      await page.keyboard.press('Control+.');
      await page.waitForSelector('.action-widget .monaco-list-row', { timeout: 30 * SECOND });
      // The load fix is computed on demand (a few re-solves in the worker); wait for it in the menu.
      const items = await until(async () => {
        const texts = await page.evaluate(() => [...document.querySelectorAll('.action-widget .monaco-list-row.action')].map((r) => (r.textContent ?? '').trim()));
        return texts.some((t) => /^Set RLAMP to /.test(t)) ? texts : null;
      }, { timeoutMs: 30 * SECOND, intervalMs: 300, message: 'the code-action menu of the saturated output has no "Set RLAMP to …" fix' });
      const index = items.findIndex((t) => /^Set RLAMP to /.test(t));
      const chosen = items[index];
      if (!/headroom [\d.]+ V/.test(chosen)) throw new Error(`the load fix does not state the headroom it gives: "${chosen}"`);
      await screenshot(page, 'saturated-output-fix-menu');
      for (let k = 0; k < index; k++) await page.keyboard.press('ArrowDown');
      await page.keyboard.press('Enter');
      const saved = await saveAndRead(page, demoFile, currentText, `applying "${chosen}"`);
      const value = /\bto\s+([0-9][0-9.]*[a-zA-Z]*)/.exec(chosen)?.[1];
      if (!value || !changedLines(currentText, saved).some((l) => /^RLAMP\s/i.test(l.trim()) && l.includes(value))) throw new Error(`"${chosen}" did not write ${value} into the RLAMP card`);
      currentText = saved;
      await until(async () => {
        const rows = await page.evaluate(() => [...document.querySelectorAll('.markers-panel .monaco-list-row')].map((r) => (r.textContent ?? '').trim()));
        return rows.length > 0 && !rows.some((t) => /mirror-output-out-of-region/.test(t)) ? rows : null;
      }, { timeoutMs: 60 * SECOND, intervalMs: 500, message: 'the mirror-output-out-of-region finding stayed after its fix was applied' });
      await screenshot(page, 'saturated-output-fixed');
      return `applied "${chosen}"`;
    });

    await check('sizing a resistor for a target current from the palette writes the picked standard value', async () => {
      const resistorLine = currentText.split(/\r?\n/).find((l) => /^RREF\s/i.test(l)) ?? currentText.split(/\r?\n/).find((l) => /^R\w*\s/i.test(l));
      if (!resistorLine) throw new Error(`examples/${DEMO} has no resistor card`);
      const name = resistorLine.trim().split(/\s+/)[0];
      await page.keyboard.press('Escape');
      await clickWord(page, name + ' ', name);
      await runPaletteCommand(page, 'qpoint: Size a reference resistor for a target current');
      const input = await page.waitForSelector('.quick-input-widget .quick-input-box input', { timeout: 10 * SECOND });
      await input.fill('1.5 volts');
      const refusal = await until(async () => page.evaluate(() => {
        const text = (document.querySelector('.quick-input-widget .quick-input-message')?.textContent ?? '').trim();
        return /not a current unit/.test(text) ? text : null;
      }), { timeoutMs: 10 * SECOND, message: 'the input box did not refuse "1.5 volts" as not a current' });
      await input.fill('400u');
      await until(async () => page.evaluate(() => /400 µA/.test(document.querySelector('.quick-input-widget .quick-input-message')?.textContent ?? '')), { timeoutMs: 5 * SECOND, message: 'the input box did not read 400u as 400 µA' });
      await page.keyboard.press('Enter');
      const candidates = await until(async () => {
        const rows = await page.evaluate(() => [...document.querySelectorAll('.quick-input-list .monaco-list-row')].map((r) => (r.textContent ?? '').trim()));
        return rows.length > 0 && rows.some((t) => /from the target/.test(t)) ? rows : null;
      }, { timeoutMs: 60 * SECOND, message: 'no standard-value candidates were offered' });
      await screenshot(page, 'size-resistor-candidates');
      await page.keyboard.press('Enter');
      const saved = await saveAndRead(page, demoFile, currentText, `sizing ${name}`);
      const changed = changedLines(currentText, saved);
      currentText = saved;
      return `refused "1.5 volts" ("${refusal.slice(0, 90)}"); ${candidates.length} candidate(s), first "${candidates[0].slice(0, 80)}"; changed: ${changed.map((l) => l.trim()).join(' | ').slice(0, 120)}`;
    });

    await check('the "Size … for a target current" code action on a resistor asks for a current and writes a standard value', async () => {
      const name = 'RREF';
      if (!currentText.split(/\r?\n/).some((l) => /^RREF\s/i.test(l))) throw new Error(`examples/${DEMO} has no RREF card`);
      await page.keyboard.press('Escape');
      await clickWord(page, name + ' ', name);
      await page.keyboard.press('Control+.');
      const found = await until(async () => {
        const texts = await page.evaluate(() => [...document.querySelectorAll('.action-widget .monaco-list-row.action')].map((r) => (r.textContent ?? '').trim()));
        const index = texts.findIndex((t) => /^Size\s+RREF\b/i.test(t));
        return index >= 0 ? { index, title: texts[index] } : null;
      }, { timeoutMs: 15 * SECOND, message: 'the code action menu on RREF has no "Size RREF …" action' });
      const title = found.title;
      // The menu focuses its first action; step down to the sizing action (the pointer is blocked while the menu opens).
      for (let k = 0; k < found.index; k++) await page.keyboard.press('ArrowDown');
      await page.keyboard.press('Enter');
      const input = await page.waitForSelector('.quick-input-widget .quick-input-box input', { timeout: 10 * SECOND });
      await input.fill('350uA');
      await until(async () => page.evaluate(() => /350 µA/.test(document.querySelector('.quick-input-widget .quick-input-message')?.textContent ?? '')), { timeoutMs: 10 * SECOND, message: 'the input box did not read 350uA as 350 µA' });
      await page.keyboard.press('Enter');
      await until(async () => page.evaluate(() => [...document.querySelectorAll('.quick-input-list .monaco-list-row')].some((r) => /from the target/.test(r.textContent ?? ''))), { timeoutMs: 60 * SECOND, message: 'no standard-value candidates were offered' });
      await page.keyboard.press('Enter');
      const saved = await saveAndRead(page, demoFile, currentText, title);
      const changed = changedLines(currentText, saved);
      currentText = saved;
      return `"${title}" → changed: ${changed.map((l) => l.trim()).join(' | ').slice(0, 120)}`;
    });

    // Three output characteristics of the demo: an NPN mirror output, a PMOS output inside a subcircuit and a Widlar output.
    // Each chart must put its out-of-region band on the side its polarity puts it (left of the edge for NPN, right for PMOS),
    // carry the operating current of the solve, a title in words, take the keyboard focus, and be screenshotted.
    const plots = [
      { what: 'an NPN mirror output', line: qName ? qName + ' ' : 'Q2 ', word: qName ?? 'Q2', device: qName ?? 'Q2', pick: undefined, side: 'left', shot: 'output-characteristic-npn' },
      { what: 'a PMOS output in a subcircuit', line: 'MOUT ', word: 'MOUT', device: 'XADC1.MOUT', pick: 'XADC1.MOUT', side: 'right', shot: 'output-characteristic-pmos', themes: true },
      { what: 'a Widlar output', line: 'Q5 ', word: 'Q5', device: 'Q5', pick: undefined, side: 'left', shot: 'output-characteristic-widlar' },
    ];
    for (const plotCase of plots) {
      await check(`plotting ${plotCase.what} (${plotCase.device}) draws its out-of-region band on the ${plotCase.side} of the edge, the solved operating point and a title in words`, async () => {
        await page.keyboard.press('Escape');
        // Go to the card's line (Ctrl+G), as a user would for a line below the fold; the command reads the card under the cursor.
        const lineNo = currentText.split(/\r?\n/).findIndex((l) => l.startsWith(plotCase.line)) + 1;
        if (lineNo < 1) throw new Error(`no line starts with "${plotCase.line}"`);
        await page.keyboard.press('Control+1');
        await sleep(200);
        await page.keyboard.press('Control+G');
        const goTo = await page.waitForSelector('.quick-input-widget .quick-input-box input', { timeout: 10 * SECOND });
        await goTo.fill(`:${lineNo}`);
        await sleep(300);
        await page.keyboard.press('Enter');
        await sleep(300);
        await runPaletteCommand(page, 'qpoint: Plot a mirror output characteristic');
        if (plotCase.pick) {
          // A card inside a subcircuit used twice is two outputs: the picker asks which.
          await until(async () => page.evaluate((d) => [...document.querySelectorAll('.quick-input-list .monaco-list-row')].some((r) => (r.textContent ?? '').includes(d)), plotCase.pick), { timeoutMs: 30 * SECOND, message: `the picker does not offer ${plotCase.pick}` });
          const input = await page.waitForSelector('.quick-input-widget .quick-input-box input', { timeout: 10 * SECOND });
          await input.fill(plotCase.pick);
          await sleep(300);
          await page.keyboard.press('Enter');
        }
        const chart = await until(() => chartIn(page, plotCase.device), { timeoutMs: 60 * SECOND, intervalMs: 500, message: `no output-characteristic chart of ${plotCase.device} appeared` });
        await sleep(500);
        await screenshot(page, plotCase.shot);
        if (!chart.edge) throw new Error('the chart has no edge-of-active-region marker');
        if (chart.sides.length !== 1 || chart.sides[0] !== plotCase.side) throw new Error(`the out-of-region band is drawn on the ${chart.sides.join(', ') || 'no'} side, not the ${plotCase.side}`);
        if (chart.operating === null || !(Number(chart.operating) > 0)) throw new Error(`the operating-point marker carries ${chart.operating}`);
        if (!/ of the .+ on /.test(chart.title) || /[a-z]-[a-z]+:/.test(chart.title)) throw new Error(`the title "${chart.title}" is not in words`);
        if (chart.tabindex !== '0') throw new Error('the chart cannot take the keyboard focus (no tabindex="0")');
        if (chart.ticks < 6) throw new Error(`only ${chart.ticks} tick labels`);
        if (/NaN|Infinity/.test(chart.text)) throw new Error('the chart shows NaN or Infinity');
        // Source: WCAG 2.1, success criterion 1.4.11 (non-text contrast) — graphical objects need 3:1 against their background.
        if (!(chart.contrast >= 3)) throw new Error(`the curve has a contrast of ${chart.contrast.toFixed(2)}:1 against the page (WCAG 1.4.11 asks 3:1)`);
        const shots = [];
        let previous = chart.background;
        if (plotCase.themes) {
          for (const [theme, name] of [['Dark High Contrast', 'hc-dark'], ['Light High Contrast', 'hc-light'], ['Dark Modern', 'dark'], ['Light Modern', 'light']]) {
            // Preferences: Color Theme, as a user picks one; the panel must follow without being reopened.
            // The panel took the focus; a click on the card's line gives it back to the editor.
            await clickWord(page, plotCase.line, plotCase.word);
            // Ctrl+K Ctrl+T opens the colour-theme picker (VS Code's default keybinding).
            await page.keyboard.press('Control+K');
            await page.keyboard.press('Control+T');
            const input = await page.waitForSelector('.quick-input-widget .quick-input-box input', { timeout: 10 * SECOND }).catch(async (e) => {
              await screenshot(page, `${plotCase.shot}-theme-picker-missing`);
              throw e;
            });
            await input.fill(theme);
            await until(async () => page.evaluate((t) => [...document.querySelectorAll('.quick-input-list .monaco-list-row')].some((r) => (r.textContent ?? '').includes(t)), theme), { timeoutMs: 10 * SECOND, message: `the theme picker does not list ${theme}` });
            await page.keyboard.press('Enter');
            const themed = await until(async () => {
              const c = await chartIn(page, plotCase.device);
              return c && c.background !== previous ? c : null;
            }, { timeoutMs: 20 * SECOND, intervalMs: 500, message: `the chart did not follow the ${theme} theme` });
            previous = themed.background;
            await sleep(500);
            await screenshot(page, `${plotCase.shot}-${name}`);
            if (!(themed.contrast >= 3)) throw new Error(`in ${theme} the curve has a contrast of ${themed.contrast.toFixed(2)}:1 (WCAG 1.4.11 asks 3:1)`);
            shots.push(`${name} ${themed.contrast.toFixed(1)}:1`);
          }
        }
        return `"${chart.title}", band ${chart.sides[0]}, operating point ${(Number(chart.operating) * 1e6).toFixed(1)} µA, contrast ${chart.contrast.toFixed(1)}:1${shots.length ? `; ${shots.join(', ')}` : ''}, ${chart.corners} corner row(s)`;
      });
    }

    await check('re-analysing from the palette brings the findings back', async () => {
      await page.keyboard.press('Escape');
      await runPaletteCommand(page, 'qpoint: Re-analyse open netlists');
      const status = await until(async () => page.evaluate(() => [...document.querySelectorAll('.statusbar-item')]
        .map((e) => (e.textContent ?? '').trim()).find((t) => /qpoint: (re-analysing|language server restarted)/.test(t))), { timeoutMs: 30 * SECOND, message: 'no re-analyse status message appeared' });
      await page.keyboard.press('Control+Shift+M');
      const rows = await until(async () => {
        const texts = await page.evaluate(() => [...document.querySelectorAll('.markers-panel .monaco-list-row')].map((r) => (r.textContent ?? '').trim()));
        const ours = texts.filter((t) => /qpoint/i.test(t));
        return ours.length > 0 ? ours : null;
      }, { timeoutMs: 60 * SECOND, intervalMs: 500, message: 'no qpoint finding came back after re-analysing' });
      return `"${status}", then ${rows.length} qpoint row(s)`;
    });

    await check('an .if branch that is not taken is shown faded, the taken one is not', async () => {
      await page.keyboard.press('Escape');
      await until(async () => {
        await page.keyboard.press('Control+P');
        const input = await page.waitForSelector('.quick-input-widget .quick-input-box input', { timeout: 5 * SECOND });
        await input.fill(CORNER_FILE);
        const listed = await until(async () => page.evaluate((name) => [...document.querySelectorAll('.quick-input-list .monaco-list-row')]
          .some((r) => (r.textContent ?? '').includes(name)), CORNER_FILE), { timeoutMs: 4 * SECOND, intervalMs: 200, message: 'not listed' }).catch(() => false);
        if (!listed) {
          await page.keyboard.press('Escape');
          return false;
        }
        await page.keyboard.press('Enter');
        return until(async () => (await editorLines(page)).some((l) => l.startsWith('R2 mid 0 9k')), { timeoutMs: 8 * SECOND, message: 'not shown' }).catch(() => false);
      }, { timeoutMs: 60 * SECOND, intervalMs: 500, message: `${CORNER_FILE} did not open` });
      // The lowest opacity Monaco renders on any part of a line (decorations are spans with their own style).
      const opacityOf = (start) => page.evaluate((s) => {
        for (const line of document.querySelectorAll('.monaco-editor .view-lines .view-line')) {
          if (!(line.textContent ?? '').replace(/\u00a0/g, ' ').startsWith(s)) continue;
          let lowest = 1;
          for (const el of line.querySelectorAll('span')) lowest = Math.min(lowest, Number(getComputedStyle(el).opacity));
          return lowest;
        }
        return null;
      }, start);
      const faded = await until(async () => {
        const o = await opacityOf('R2 mid 0 9k');
        return o !== null && o < 0.8 ? o : null;
      }, { timeoutMs: 60 * SECOND, intervalMs: 500, message: 'the untaken branch (R2 mid 0 9k) was never drawn faded' });
      const taken = await opacityOf('R2 mid 0 10k');
      await screenshot(page, 'inactive-branch');
      if (taken === null || taken < 0.99) throw new Error(`the taken branch (R2 mid 0 10k) is drawn with opacity ${taken}`);
      return `untaken branch opacity ${faded}, taken branch ${taken}`;
    });

    await check('a .net file is a netlist only when its first cards read as one', async () => {
      await page.keyboard.press('Escape');
      const modes = {};
      for (const [name, text] of Object.entries(NET_FILES)) {
        const firstLine = text.split('\n')[0];
        await until(async () => {
          await page.keyboard.press('Control+P');
          const input = await page.waitForSelector('.quick-input-widget .quick-input-box input', { timeout: 5 * SECOND });
          await input.fill(name);
          await sleep(600);
          await page.keyboard.press('Enter');
          return until(async () => (await editorLines(page)).some((l) => l.includes(firstLine.slice(0, 24))), { timeoutMs: 8 * SECOND, message: 'not shown' }).catch(() => false);
        }, { timeoutMs: 40 * SECOND, intervalMs: 500, message: `${name} did not open` });
        // The language-mode item of the status bar, by its whole text (other items, such as qpoint's status messages, say "netlists").
        const want = name === 'bias-cell.net' ? /^Netlist \(SPICE-style\)$/ : /^Plain Text$/;
        modes[name] = await until(async () => page.evaluate((source) => {
          const items = [...document.querySelectorAll('.statusbar-item')].map((e) => (e.textContent ?? '').trim());
          return items.find((t) => new RegExp(source).test(t));
        }, want.source), { timeoutMs: 20 * SECOND, message: `the status bar does not show ${want} for ${name}` });
      }
      await screenshot(page, 'net-file-left-alone');
      return Object.entries(modes).map(([n, m]) => `${n}: "${m}"`).join(', ');
    });

    await check('the page raised no uncaught script errors from the extension', async () => {
      const ours = pageErrors.filter((m) => /qpoint/i.test(m));
      if (ours.length > 0) throw new Error(ours.join(' | '));
      return pageErrors.length ? `${pageErrors.length} unrelated workbench error(s) ignored` : 'none';
    });
  } finally {
    if (context) await withTimeout(context.close(), 10 * SECOND, 'closing chromium').catch((e) => progress(e.message));
    await stopGroup(server, 'code-server');
    serverLog.end();
    // Keep the editor's logs (extension host, the qpoint output channel) beside the screenshots.
    try { cpSync(join(userData, 'logs'), join(OUT, 'logs'), { recursive: true }); } catch { /* no logs written */ }
    rmSync(work, { recursive: true, force: true });
    progress(`run time ${((Date.now() - started) / SECOND).toFixed(1)} s (setup ${((setupDone - started) / SECOND).toFixed(1)} s)`);
  }
}

// An interrupted run still stops code-server (and with it the extension host and language server).
let liveServer;
for (const signal of ['SIGINT', 'SIGTERM', 'SIGHUP']) {
  process.once(signal, () => {
    if (liveServer?.pid) { try { process.kill(-liveServer.pid, 'SIGKILL'); } catch { /* already gone */ } }
    process.stderr.write(`[editor-test] stopped by ${signal}.\n`);
    process.exit(130);
  });
}

// Fail loudly, never hang: the whole run has an outer limit as well as per-step limits.
const OVERALL_LIMIT_MS = 40 * 60 * SECOND;
const overall = setTimeout(() => {
  process.stderr.write(`[editor-test] the run exceeded ${OVERALL_LIMIT_MS / 60000} minutes and was stopped.\n`);
  process.exit(2);
}, OVERALL_LIMIT_MS);
overall.unref();

main()
  .catch((e) => {
    record('setting up the editor', false, e instanceof Error ? e.message : String(e));
  })
  .finally(() => {
    const passed = results.filter((r) => r.ok).length;
    const failed = results.length - passed;
    process.stdout.write(`${passed} passed, ${failed} failed\n`);
    process.exitCode = failed > 0 || passed === 0 ? 1 : 0;
  });

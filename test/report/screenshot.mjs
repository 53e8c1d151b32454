// The HTML report in a real browser: `qpoint report --format html` opened in headless Chromium (Debian's, driven by
// playwright-core), checked as a reviewer sees it and screenshotted in light and dark. Run after `npm run build`.
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, rmSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { ensureEditor } from '../editor/install-editor.mjs';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
const OUT = join(ROOT, 'test-output', 'report');
const CLI = join(ROOT, 'dist', 'cli.js');
const results = [];

function record(name, ok, detail) {
  results.push(ok);
  process.stdout.write(`${ok ? 'PASS' : 'FAIL'} ${name}${detail ? ` — ${detail}` : ''}\n`);
}

async function check(name, fn) {
  try {
    record(name, true, await fn());
  } catch (e) {
    record(name, false, e instanceof Error ? e.message : String(e));
  }
}

/** WCAG 2.1 relative luminance of `rgb(r, g, b)`. */
function luminance(rgb) {
  const m = /rgba?\(\s*(\d+)[ ,]+(\d+)[ ,]+(\d+)/.exec(rgb ?? '');
  if (!m) return undefined;
  const lin = (c) => {
    const s = Number(c) / 255;
    return s <= 0.04045 ? s / 12.92 : ((s + 0.055) / 1.055) ** 2.4;
  };
  return 0.2126 * lin(m[1]) + 0.7152 * lin(m[2]) + 0.0722 * lin(m[3]);
}

/** WCAG 2.1 contrast ratio of two colours. */
function contrast(a, b) {
  const la = luminance(a);
  const lb = luminance(b);
  return la === undefined || lb === undefined ? NaN : (Math.max(la, lb) + 0.05) / (Math.min(la, lb) + 0.05);
}

async function main() {
  if (!existsSync(CLI)) throw new Error('dist/cli.js is missing: run `npm run build` first.');
  rmSync(OUT, { recursive: true, force: true });
  mkdirSync(OUT, { recursive: true });
  const page = join(OUT, 'report.html');
  const demo = join(ROOT, 'examples', 'sensor-bias.cir');
  const made = spawnSync(process.execPath, [CLI, 'report', '--format', 'html', '-o', page, demo], { cwd: ROOT, encoding: 'utf8', timeout: 180_000 });
  if (made.status !== 0) throw new Error(`qpoint report exited ${made.status}: ${made.stderr}`);
  const json = JSON.parse(spawnSync(process.execPath, [CLI, 'report', '--format', 'json', demo], { cwd: ROOT, encoding: 'utf8', timeout: 180_000 }).stdout);
  const outputs = json.files[0].structures.flatMap((s) => s.outputs.map((o) => o.device));

  // Debian's chromium, installed by the editor test's installer when it is missing (no browser download).
  const editor = await ensureEditor({ logFile: join(OUT, 'setup.log') });
  const { chromium } = await import('playwright-core');
  const browser = await chromium.launch({ executablePath: editor.chromium, headless: true, args: ['--no-sandbox', '--disable-gpu'] });
  try {
    for (const scheme of ['light', 'dark']) {
      const context = await browser.newContext({ viewport: { width: 1280, height: 900 }, colorScheme: scheme });
      const requests = [];
      await context.route('**/*', (route) => {
        const url = route.request().url();
        if (url.startsWith('file:')) return route.continue();
        requests.push(url);
        return route.abort();
      });
      const tab = await context.newPage();
      const errors = [];
      tab.on('console', (m) => m.type() === 'error' && errors.push(m.text()));
      tab.on('pageerror', (e) => errors.push(e.message));
      await tab.goto(pathToFileURL(page).href, { waitUntil: 'load' });
      const info = await tab.evaluate(() => ({
        drifts: document.querySelectorAll('svg.qp-chart.qp-drift').length,
        charts: [...document.querySelectorAll('svg.qp-chart:not(.qp-drift):not(.qp-histogram)')].map((s) => {
          const r = s.getBoundingClientRect();
          const curve = s.querySelector('.qp-curve');
          return { w: r.width, h: r.height, title: s.querySelector('title')?.textContent ?? '', stroke: curve ? getComputedStyle(curve).stroke : '', sides: [...s.querySelectorAll('.qp-region-outside')].map((b) => b.getAttribute('class')) };
        }),
        rows: document.querySelectorAll('table.qp-structures tbody tr').length,
        findings: document.querySelectorAll('table.qp-findings tbody tr').length,
        background: getComputedStyle(document.body).backgroundColor,
        text: document.body.innerText,
      }));
      const shot = join(OUT, `report-${scheme}.png`);
      await tab.screenshot({ path: shot, fullPage: true });
      await check(`the ${scheme} report loads nothing from elsewhere and raises no error`, async () => {
        if (requests.length) throw new Error(`it asked for ${requests.join(', ')}`);
        if (errors.length) throw new Error(errors.join('; '));
        return 'no request, no error';
      });
      await check(`the ${scheme} report draws one chart per mirror output (${outputs.length}), each titled in words and laid out`, async () => {
        if (info.charts.length !== Math.min(outputs.length, 24)) throw new Error(`${info.charts.length} charts for ${outputs.length} outputs`);
        for (const c of info.charts) {
          if (!(c.w > 300 && c.h > 150)) throw new Error(`"${c.title}" is ${c.w}×${c.h} px`);
          if (!/ of the .+ on /.test(c.title)) throw new Error(`the title "${c.title}" is not in words`);
        }
        const pmos = info.charts.filter((c) => /\(PMOS/.test(c.title));
        if (!pmos.length || pmos.some((c) => !c.sides.every((s) => /qp-right/.test(s)))) throw new Error('a PMOS chart has its out-of-region band left of the edge');
        // Each characteristic has its drift against temperature under it (the same figures as the panel and the JSON).
        if (info.drifts !== info.charts.length) throw new Error(`${info.drifts} drift plots for ${info.charts.length} charts`);
        return `${info.charts.length} charts, each with its drift plot; screenshot ${shot}`;
      });
      await check(`the ${scheme} report lists the structures and findings`, async () => {
        if (info.rows < outputs.length) throw new Error(`${info.rows} structure rows for ${outputs.length} outputs`);
        if (info.findings !== json.files[0].diagnostics.length) throw new Error(`${info.findings} finding rows for ${json.files[0].diagnostics.length} findings`);
        if (/NaN|undefined|Infinity/.test(info.text)) throw new Error('the page shows NaN, undefined or Infinity');
        return `${info.rows} structure rows, ${info.findings} findings`;
      });
      // Source: WCAG 2.1, success criterion 1.4.11 (non-text contrast): graphical objects need 3:1 against their background.
      await check(`the ${scheme} report's curves stand out from the page (WCAG 1.4.11, 3:1)`, async () => {
        const ratios = info.charts.map((c) => contrast(c.stroke, info.background));
        const worst = Math.min(...ratios);
        if (!(worst >= 3)) throw new Error(`contrast ${worst.toFixed(2)}:1 (${info.charts[0]?.stroke} on ${info.background})`);
        return `${worst.toFixed(1)}:1 (${info.charts[0]?.stroke} on ${info.background})`;
      });
      await context.close();
    }
  } finally {
    await browser.close();
  }
  const failed = results.filter((r) => !r).length;
  process.stdout.write(`${results.length - failed} passed, ${failed} failed\n`);
  process.exitCode = failed ? 1 : 0;
}

main().catch((e) => {
  process.stdout.write(`FAIL the report test could not run — ${e instanceof Error ? e.message : String(e)}\n0 passed, 1 failed\n`);
  process.exitCode = 1;
});

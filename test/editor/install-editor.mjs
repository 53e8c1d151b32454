// Installs, idempotently and without outside downloads, the headless editor the real-editor test drives: Debian's chromium and a cached code-server 4.96.4.
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, writeFileSync, rmSync, createWriteStream, copyFileSync, chmodSync } from 'node:fs';
import { homedir, tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';

/** The editor server version; newer releases need Node 24, this one runs on Node 20. */
export const CODE_SERVER_VERSION = '4.96.4';
const PROXY_AGENT_VERSION = '0.27.0';
const RIPGREP_CACHE_NAME = 'vscode-ripgrep-cache-1.15.9';
const RIPGREP_TARBALL = 'ripgrep-v13.0.0-10-x86_64-unknown-linux-musl.tar.gz';
const COMPLETE_MARKER = '.qpoint-install-complete';

const MINUTE = 60_000;

/** Writes one progress line, prefixed so it stands out among tool output. */
export function progress(message) {
  process.stdout.write(`[editor-test] ${message}\n`);
}

/** A failure of one named step, carrying the tail of its output so the message explains itself. */
export class StepError extends Error {
  constructor(step, detail) {
    super(`${step} failed: ${detail}`);
    this.name = 'StepError';
  }
}

/**
 * Runs a command to completion with a hard time limit; output goes to `logFile` (appended) and
 * its last lines are quoted in the error when the command fails or runs out of time.
 * @param {string} step human-readable step name for messages
 * @param {string} cmd executable
 * @param {string[]} args arguments
 * @param {{ cwd?: string, env?: NodeJS.ProcessEnv, timeoutMs: number, logFile: string }} options
 * @returns {Promise<string>} the command's standard output
 */
export function runStep(step, cmd, args, options) {
  return new Promise((resolve, reject) => {
    const log = createWriteStream(options.logFile, { flags: 'a' });
    log.write(`\n$ ${cmd} ${args.join(' ')}\n`);
    let stdout = '';
    let tail = '';
    const keepTail = (chunk) => {
      tail = (tail + chunk.toString()).slice(-4000);
    };
    const child = spawn(cmd, args, { cwd: options.cwd, env: options.env ?? process.env, stdio: ['ignore', 'pipe', 'pipe'], detached: true });
    child.stdout.on('data', (c) => { stdout += c.toString(); keepTail(c); log.write(c); });
    child.stderr.on('data', (c) => { keepTail(c); log.write(c); });
    const timer = setTimeout(() => {
      try { process.kill(-child.pid, 'SIGKILL'); } catch { /* already gone */ }
      finish(new StepError(step, `no result after ${Math.round(options.timeoutMs / 1000)} s (log: ${options.logFile}).\n${lastLines(tail)}`));
    }, options.timeoutMs);
    let done = false;
    const finish = (err) => {
      if (done) return;
      done = true;
      clearTimeout(timer);
      log.end();
      if (err) reject(err); else resolve(stdout);
    };
    child.on('error', (e) => finish(new StepError(step, `could not start ${cmd}: ${e.message}`)));
    child.on('close', (code, signal) => {
      if (code === 0) finish();
      else finish(new StepError(step, `${cmd} exited with ${signal ?? `code ${code}`} (log: ${options.logFile}).\n${lastLines(tail)}`));
    });
  });
}

function lastLines(text, n = 15) {
  return text.trimEnd().split('\n').slice(-n).map((l) => `    ${l}`).join('\n');
}

/** The cache folder for the editor install, outside the project's node_modules. */
export function cacheRoot() {
  const base = process.env.XDG_CACHE_HOME || join(homedir(), '.cache');
  return join(base, 'qpoint-editor-test');
}

/** True when the system packages the editor needs are present. */
function systemPackagesPresent() {
  return existsSync('/usr/bin/chromium') && (existsSync('/usr/bin/rg') || existsSync('/usr/local/bin/rg'))
    && existsSync('/usr/include/gssapi/gssapi.h');
}

async function ensureSystemPackages(logFile) {
  if (systemPackagesPresent()) {
    progress('chromium, ripgrep and the Kerberos headers are present.');
    return;
  }
  if (typeof process.getuid === 'function' && process.getuid() !== 0) {
    throw new StepError('Installing system packages', 'chromium, libkrb5-dev or ripgrep is missing and this is not root; run `apt-get install -y chromium libkrb5-dev ripgrep` as root first.');
  }
  progress('installing chromium, libkrb5-dev and ripgrep with apt-get (a few minutes the first time)...');
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  await runStep('apt-get update', 'apt-get', ['update'], { env, timeoutMs: 5 * MINUTE, logFile });
  await runStep('apt-get install', 'apt-get', ['install', '-y', 'chromium', 'libkrb5-dev', 'ripgrep'], { env, timeoutMs: 15 * MINUTE, logFile });
  if (!systemPackagesPresent()) throw new StepError('Installing system packages', 'apt-get finished but /usr/bin/chromium, rg or gssapi.h is still missing.');
}

/** Points the shrinkwrap's git+ssh entry for @vscode/proxy-agent at the registry tarball (same integrity). */
async function patchShrinkwrap(codeServerDir, logFile) {
  const file = join(codeServerDir, 'lib', 'vscode', 'npm-shrinkwrap.json');
  if (!existsSync(file)) throw new StepError('Patching the shrinkwrap', `${file} does not exist; the code-server package looks incomplete.`);
  const json = JSON.parse(readFileSync(file, 'utf8'));
  let patched = 0;
  let tarball;
  for (const [key, entry] of Object.entries(json.packages ?? {})) {
    if (!key.endsWith('node_modules/@vscode/proxy-agent')) continue;
    if (typeof entry.resolved === 'string' && !entry.resolved.startsWith('git')) continue;
    tarball ??= (await runStep('Looking up the @vscode/proxy-agent tarball', 'npm', ['view', `@vscode/proxy-agent@${PROXY_AGENT_VERSION}`, 'dist.tarball'], { timeoutMs: 2 * MINUTE, logFile })).trim();
    if (!/^https?:\/\//.test(tarball)) throw new StepError('Looking up the @vscode/proxy-agent tarball', `npm view returned "${tarball}", not a URL.`);
    entry.resolved = tarball;
    patched++;
  }
  if (patched > 0) writeFileSync(file, JSON.stringify(json, null, 2) + '\n');
  progress(patched > 0 ? `pointed ${patched} @vscode/proxy-agent entry at the registry tarball.` : 'the shrinkwrap needs no patch.');
}

/** Pre-seeds @vscode/ripgrep's download cache with Debian's rg so its postinstall needs no download. */
async function seedRipgrepCache(workDir, logFile) {
  const cacheDir = join(process.env.TMPDIR || tmpdir(), RIPGREP_CACHE_NAME);
  const target = join(cacheDir, RIPGREP_TARBALL);
  if (existsSync(target)) return;
  mkdirSync(cacheDir, { recursive: true });
  const rg = existsSync('/usr/bin/rg') ? '/usr/bin/rg' : '/usr/local/bin/rg';
  const stage = join(workDir, 'rg-stage');
  mkdirSync(stage, { recursive: true });
  copyFileSync(rg, join(stage, 'rg'));
  chmodSync(join(stage, 'rg'), 0o755);
  await runStep('Packing ripgrep for the cache', 'tar', ['-czf', target, '-C', stage, 'rg'], { timeoutMs: MINUTE, logFile });
  progress(`seeded ${target} with ${rg}.`);
}

/**
 * Makes sure chromium and code-server are installed, reusing the cached install when complete.
 * @param {{ logFile?: string }} [options]
 * @returns {Promise<{ codeServerDir: string, entry: string, chromium: string }>}
 */
export async function ensureEditor(options = {}) {
  const root = cacheRoot();
  mkdirSync(root, { recursive: true });
  const logFile = options.logFile ?? join(root, 'install.log');
  await ensureSystemPackages(logFile);

  const installDir = join(root, `code-server-${CODE_SERVER_VERSION}`);
  const codeServerDir = join(installDir, 'node_modules', 'code-server');
  const entry = join(codeServerDir, 'out', 'node', 'entry.js');
  if (existsSync(join(installDir, COMPLETE_MARKER)) && existsSync(entry)) {
    progress(`reusing code-server ${CODE_SERVER_VERSION} from ${installDir}.`);
    return { codeServerDir, entry, chromium: '/usr/bin/chromium' };
  }

  progress(`installing code-server ${CODE_SERVER_VERSION} into ${installDir} (several minutes the first time; log: ${logFile})...`);
  rmSync(installDir, { recursive: true, force: true });
  mkdirSync(installDir, { recursive: true });
  writeFileSync(join(installDir, 'package.json'), JSON.stringify({ name: 'qpoint-editor-test-cache', private: true }, null, 2) + '\n');
  const npmEnv = { ...process.env, npm_config_fund: 'false', npm_config_audit: 'false', npm_config_update_notifier: 'false' };
  await runStep('npm install code-server', 'npm', ['install', '--ignore-scripts', '--no-save', `code-server@${CODE_SERVER_VERSION}`], { cwd: installDir, env: npmEnv, timeoutMs: 20 * MINUTE, logFile });
  progress('rebuilding argon2 against the system Node headers...');
  await runStep('npm rebuild argon2', 'npm', ['rebuild', 'argon2', '--nodedir=/usr'], { cwd: installDir, env: npmEnv, timeoutMs: 10 * MINUTE, logFile });
  await patchShrinkwrap(codeServerDir, logFile);
  await seedRipgrepCache(installDir, logFile);

  progress('running code-server\'s postinstall (installs the editor\'s own modules)...');
  const npmVersion = (await runStep('npm -v', 'npm', ['-v'], { timeoutMs: MINUTE, logFile })).trim();
  const postEnv = {
    ...npmEnv,
    npm_config_unsafe_perm: 'true',
    npm_config_nodedir: '/usr',
    npm_config_user_agent: `npm/${npmVersion} node/${process.version} linux x64`,
  };
  await runStep('code-server postinstall', 'sh', ['./postinstall.sh'], { cwd: codeServerDir, env: postEnv, timeoutMs: 25 * MINUTE, logFile });
  if (!existsSync(entry)) throw new StepError('Installing code-server', `${entry} is missing after the install.`);
  writeFileSync(join(installDir, COMPLETE_MARKER), new Date().toISOString() + '\n');
  progress('code-server is installed.');
  return { codeServerDir, entry, chromium: '/usr/bin/chromium' };
}

// Standalone use: `node test/editor/install-editor.mjs` prepares the cache ahead of a test run.
if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  ensureEditor().then(
    (r) => progress(`ready: ${r.entry}`),
    (e) => { process.stderr.write(`[editor-test] ${e.message}\n`); process.exit(1); },
  );
}

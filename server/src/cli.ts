// The command-line checker: `qpoint check` for CI (text, JSON, SARIF) and `qpoint report` for people.

import { technologyWords } from '../../shared-analysis/src/structures/technology';
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import { analyseSession, attachAllSizingFixes, monteCarloOf } from '../../shared-analysis/src/service';
import { LineIndex } from '../../shared-analysis/src/syntax/line-index';
import type { Analysis, AnalysisOptions, ResistorSeries } from '../../shared-analysis/src/analysis';
import type { Finding, Severity, Workspace } from '../../shared-analysis/src/types';
import { formatHeadroom, formatQuantity } from '../../shared-analysis/src/view/format';
import { recordIsOff } from '../../shared-analysis/src/checks/devices/context';
import { dissipation, dissipationAt, powerColumns, powerTable } from '../../shared-analysis/src/checks/devices/power';
import { histogramText, spreadText } from '../../shared-analysis/src/variation/text';
import { findingCatalogue } from '../../shared-analysis/src/codes';
import { capitalised, kindName } from '../../shared-analysis/src/structures/catalogue';
import { derivedVoltageLines, outputWords, startupLine } from '../../shared-analysis/src/features/structure-words';
import { defaultPolicy, isNetworkPath, PolicyReader, realRoots, type ReadPolicy } from './read-policy';
import { crossCheckCorners, OPTION_RULES, parseDecimal, type NumberRule } from './option-rules';
import { escapeControls, escapedJsonChunk } from './escape';
import { JsonEntries, JsonItems, JsonText, writeJson, writeJsonBytes } from './json-stream';
import { pointReader, pointVectors, TableEntries, type PointReader } from '../../shared-analysis/src/solve/point';
import type { OperatingPoint } from '../../shared-analysis/src/solve/types';
import { hasUniqueNames } from '../../shared-analysis/src/solve/solved-point';
import type { CornerResult, Structure } from '../../shared-analysis/src/structures/types';
import type { OutputVariation, VariationResult } from '../../shared-analysis/src/variation/types';
import { leadingContributors, sourceSummaries } from '../../shared-analysis/src/variation/index';
import { isOneOf, pushAll } from '../../shared-analysis/src/arrays';
import { cornerColumns, summariseOutputs, type CornerAxis, type OutputCornerSummary } from '../../shared-analysis/src/structures/corner-columns';
import { nameTable } from '../../shared-analysis/src/names';
import { htmlPage, htmlSection, markdownPage, markdownSection, MAX_PLOTS_PER_FILE, type ReportFile } from './report-pages';
import { expandFiles, Progress, runPool } from './batch';
import { EXIT } from './cli-exit';
import { outputCharacteristic } from '../../shared-analysis/src/features/sweep';
import { OUTPUT_CHARACTERISTIC_CSS, renderOutputCharacteristicSvg } from '../../shared-analysis/src/view/plot';

/** Shown with every report: the numbers are for design review, not sign-off. */
export const CAUTION =
  'Caution: these figures are design-review estimates, not a sign-off. Mains-powered and high-voltage ' +
  'circuits need review by a qualified person under local codes and licensed practice.';

export { EXIT };

const USAGE = `Usage:
  qpoint check [options] [--] FILE...    check netlists for CI
  qpoint report [options] [--] FILE...   print the bias point, structures and findings for people
  qpoint sweep [options] --output DEVICE FILE
                                         print one mirror output's characteristic (CSV or SVG)
  qpoint --help | --version

Options:
  --format FORMAT              'check': text, json or sarif (default text);
                               'report': text, json, html (one self-contained page with the
                               output characteristics) or markdown (a CI job summary);
                               'sweep': csv (default) or svg
  -o FILE                      'report' and 'sweep': write to FILE instead of the standard output
  --output DEVICE              'sweep': the mirror output to sweep (hierarchical name, e.g. X1.Q3)
  --points N                   'sweep': points across the rails, 2 to 2001 (default 81)
  --temperature C              analysis temperature in °C (overrides .temp)
  --series E12|E24|E48|E96|E192  standard series for resistor fixes (default E24)
  --headroom-margin V          minimum headroom beyond the active-region edge (default 0.3)
  --resistor-power-limit W     dissipation limit of a resistor without its own RATEDPOWER (default 0.25)
  --device-power-limit W       the same for a transistor or diode (default 0.5)
  --supply-tolerance PCT       corner supply tolerance in percent, 0 to 50 (default 5)
  --cold C / --hot C           corner temperatures, hot above cold (default -40 / 125)
  --beta-low F / --beta-high F beta corner factors, low in (0, 1], high in [1, 100] (default 0.5 / 2)
  --no-corners                 skip the corner re-solves
  --process-kp PCT             add slow/fast MOS process corners: every KP down/up by PCT (0 to 50)
  --process-vto V              ... and every |VTO| up/down by V (0 to 1); either one turns them on
  --no-variation               skip the spread analysis (sensitivities, σ, worst case, yield)
  --resistor-tolerance PCT     tolerance of a resistor without '; tol' on its card, 0 to 50
                               (default: the --series tolerance, E24 5 %)
  --yield-target PCT           predicted yield below which a target is flagged (default 99.7)
  --monte-carlo N              also run N seeded Monte Carlo re-solves (1 to 100000); 'report'
                               prints their σ and histogram beside the linear figures
  --seed S                     the Monte Carlo seed (default 1); the same seed repeats the numbers
  --all-corners                JSON: every structure's results at every corner, not only the
                               per-output summary (worst current and headroom, and where)
  --hand-analysis-steps        JSON: each structure's worked hand-analysis steps (formula, numbers
                               substituted, value) in its estimate; left out by default
  --spread-breakdown           JSON: every ranked spread contributor of each output (by default
                               the three largest) and its largest sensitivities (left out by default)
  --indented                   JSON and SARIF indented two spaces a level, for reading (by
                               default they are written on one line, about half the size)
  --compact                    JSON and SARIF on one line (the default; undoes --indented)
  --severity CODE=LEVEL        override one finding's severity (error|warning|info|hint|off); repeatable
  --fail-level error|warning|info|hint   lowest severity that makes 'check' exit 1 (default error)
  --include-root DIR           also let .include read files under DIR; repeatable
  --include-anywhere           let .include read files outside the allowed folders
  --search-folder DIR          look for included files in DIR when they are not beside the
                               including file (after it, in the order given); repeatable;
                               DIR's tree is readable too
  --workers N                  'check' and 'report': analyse N files at once, each on its own worker
                               thread (default: one per core, at most one per file; more than the
                               cores counts as the cores); 1 analyses them one after another in
                               this process. The output is the same and in the files' order
  --file-time-limit S          with more than one worker: seconds one file may take (default 600);
                               past it its worker is stopped and the file reported as failed (exit 3)
  --charts-per-file N|all      'report --format html': output characteristics drawn per file, least
                               headroom first (default 24); the page names the outputs left out
  --                           everything after it is a file name, even if it starts with '-'

FILE may be a pattern qpoint expands itself when the shell did not: 'boards/**/*.cir'
(** is any depth of folders), '*.sp', 'cell?.cir'. On a terminal, a run over several
files shows a progress line on stderr. A worker thread that crashes or runs past
--file-time-limit costs its own file only: that file gets an analysis-stopped finding.

Includes are read only from the current folder's tree, the checked netlist's folder tree and
--include-root folders; only regular text files up to 64 MiB; never network paths.

Exit codes: 0 nothing at or above --fail-level; 1 findings at or above --fail-level;
2 bad command line; 3 qpoint failed (a file could not be read, or an analysis stopped).

Text output: one line per finding, 'file:line:col severity code message' (lines and columns from 1).
Control characters and bidirectional marks in echoed text are printed escaped (\\x1b, \\u202e).`;

/** The output formats each command writes. */
const FORMATS = {
  check: ['text', 'json', 'sarif'],
  report: ['text', 'json', 'html', 'markdown'],
  sweep: ['csv', 'svg'],
} as const;

const SEVERITY_RANK: Record<Severity, number> = { error: 0, warning: 1, info: 2, hint: 3 };

/** The command line reads netlists up to this many flattened elements (the editor stops at 500,000). */
export const CLI_MAX_ELEMENTS = 2_000_000;

/** Thrown for bad command lines; reported with the usage text and exit code 2. */
class UsageError extends Error {}

interface CliOptions {
  command: 'check' | 'report' | 'sweep';
  files: string[];
  format: 'text' | 'json' | 'sarif' | 'html' | 'markdown' | 'csv' | 'svg';
  /** `-o FILE`: where 'report' and 'sweep' write. */
  outFile?: string;
  /** `--output DEVICE`: the output 'sweep' sweeps. */
  device?: string;
  /** `--points N` for 'sweep'. */
  points: number;
  failLevel: Severity;
  analysis: AnalysisOptions;
  /** Folders besides the current one and each netlist's own whose files includes may read. */
  includeRoots: string[];
  includeAnywhere: boolean;
  /** `--monte-carlo N` and `--seed S`: seeded re-solves after the analysis (docs/VARIATION.md). */
  monteCarlo?: { runs: number; seed: number };
  /** JSON: every corner's results, not only the summary. */
  allCorners: boolean;
  /** JSON: the hand analysis's worked steps in each structure's estimate (the engine formats them only then). */
  handAnalysisSteps: boolean;
  /** JSON: each output's ranked spread contributors and sensitivities. */
  spreadBreakdown: boolean;
  /** JSON and SARIF indented for reading (`--indented`); on one line by default. */
  indented: boolean;
  /** `--workers N`: files analysed at once on worker threads; 1 analyses them one after another in this thread. */
  workers?: number;
  /** `--file-time-limit S` in milliseconds: how long one file may take in a worker before it is stopped and reported. */
  fileTimeLimitMs: number;
  /** `--charts-per-file N` ('report --format html'): output characteristics drawn per file, worst first; Infinity for all. */
  chartsPerFile: number;
}

/**
 * Reads files from disk under the shared reading policy (regular files, size and time
 * limits, no network paths); includes resolve relative to the including file and must lie
 * in an allowed folder: the current directory's tree, the checked netlist's folder tree and
 * the `--include-root` folders, unless `--include-anywhere` lifts that.
 */
export class PathWorkspace implements Workspace {
  private readonly reader: PolicyReader;
  private extraRoots: string[] = [];

  constructor(policy: ReadPolicy = defaultPolicy([process.cwd()])) {
    this.reader = new PolicyReader(policy);
  }

  /** Reads the netlist named on the command line: the same checks as an include, except confinement (the user chose it). */
  readRoot(file: string): { text: string } | { refused: string } {
    const text = this.reader.read(file, [], { anywhere: true });
    return text === undefined ? { refused: this.reader.whyUnreadable(file) ?? 'cannot be read' } : { text };
  }

  /** Makes the folder tree of the netlist being checked readable (and no other netlist's). */
  setRoot(file: string): void {
    this.extraRoots = realRoots([path.dirname(file)]);
  }

  read(uri: string): string | undefined {
    return this.reader.read(uri, this.extraRoots);
  }

  whyUnreadable(uri: string): string | undefined {
    return this.reader.whyUnreadable(uri);
  }

  resolve(fromUri: string, ref: string): string {
    // A network path stays as written, so reading refuses it rather than trying a local look-alike.
    if (isNetworkPath(ref)) return ref;
    return path.resolve(path.dirname(fromUri), ref);
  }

  /** The names in a local folder, for the engine's case-insensitive retry of an include; never a network path. */
  list(folder: string): readonly string[] | undefined {
    if (isNetworkPath(folder)) return undefined;
    try {
      return fs.readdirSync(folder);
    } catch {
      return undefined;
    }
  }
}

/** A number flag checked by the rule the server applies to the same setting. */
function numberFlag(flag: string, text: string | undefined, { ok, rule }: NumberRule): number {
  const v = parseDecimal(text);
  if (v === undefined) throw new UsageError(`${flag} needs a decimal number, got ${text === undefined ? 'nothing' : `'${escapeControls(text)}'`}.`);
  if (!ok(v)) throw new UsageError(`${flag} must be ${rule}; got ${v}.`);
  return v;
}

export function parseArgs(argv: string[]): CliOptions | 'help' | 'version' {
  if (argv.length === 0) throw new UsageError('Say what to do: check or report, and the netlist files.');
  if (argv[0] === '--help' || argv[0] === '-h' || argv[0] === 'help') return 'help';
  if (argv[0] === '--version') return 'version';
  const command = argv[0];
  if (command !== 'check' && command !== 'report' && command !== 'sweep') throw new UsageError(`Unknown command '${escapeControls(command)}'.`);
  const opts: CliOptions = { command, files: [], format: command === 'sweep' ? 'csv' : 'text', failLevel: 'error', analysis: { maxElements: CLI_MAX_ELEMENTS }, includeRoots: [], includeAnywhere: false, allCorners: false, handAnalysisSteps: false, spreadBreakdown: false, indented: false, points: 81, fileTimeLimitMs: DEFAULT_FILE_TIME_LIMIT_S * 1000, chartsPerFile: MAX_PLOTS_PER_FILE };
  const corners: NonNullable<AnalysisOptions['corners']> = {};
  const severities: Record<string, Severity | 'off'> = Object.create(null);
  const catalogue = findingCatalogue();
  let filesOnly = false;
  for (let i = 1; i < argv.length; i++) {
    const a = argv[i]!;
    const next = () => argv[++i];
    if (filesOnly) {
      opts.files.push(a);
      continue;
    }
    switch (a) {
      case '--':
        filesOnly = true;
        break;
      // Asked after the command (`qpoint check --help`), as command-line tools take it: the usage, exit 0.
      case '--help':
      case '-h':
        return 'help';
      case '--format': {
        const f = next() ?? '';
        const allowed = FORMATS[command];
        if (!(allowed as readonly string[]).includes(f)) throw new UsageError(`'${command} --format' takes ${allowed.join(', ')}; got '${escapeControls(f)}'.${command === 'report' && f === 'sarif' ? " SARIF lists findings for code scanning, so use 'check --format sarif'." : ''}`);
        opts.format = f as CliOptions['format'];
        break;
      }
      case '-o': {
        const f = next();
        if (!f) throw new UsageError('-o needs a file name.');
        if (command === 'check') throw new UsageError("-o is for 'report' and 'sweep'; 'check' writes to the standard output.");
        opts.outFile = f;
        break;
      }
      case '--output': {
        const d = next();
        if (!d) throw new UsageError('--output needs a device name (a mirror output, e.g. Q2 or X1.M3).');
        if (command !== 'sweep') throw new UsageError("--output names the device 'sweep' sweeps; 'report' writes to a file with -o FILE.");
        opts.device = d;
        break;
      }
      case '--points': {
        const text = next();
        const v = parseDecimal(text);
        if (v === undefined || !Number.isInteger(v) || v < 2 || v > 2001) throw new UsageError(`--points takes a whole number from 2 to 2001, got '${escapeControls(text ?? '')}'.`);
        opts.points = v;
        break;
      }
      case '--temperature':
        opts.analysis.temperatureC = numberFlag(a, next(), OPTION_RULES.temperatureC);
        break;
      case '--series': {
        const s = (next() ?? '').toUpperCase();
        if (!['E12', 'E24', 'E48', 'E96', 'E192'].includes(s)) throw new UsageError(`--series takes E12, E24, E48, E96 or E192, got '${escapeControls(s)}'.`);
        opts.analysis.resistorSeries = s as ResistorSeries;
        break;
      }
      case '--resistor-power-limit':
        (opts.analysis.powerLimits ??= {}).resistorW = numberFlag(a, next(), OPTION_RULES.powerLimitW);
        break;
      case '--device-power-limit':
        (opts.analysis.powerLimits ??= {}).deviceW = numberFlag(a, next(), OPTION_RULES.powerLimitW);
        break;
      case '--headroom-margin':
        opts.analysis.headroomMarginV = numberFlag(a, next(), OPTION_RULES.headroomMarginV);
        break;
      case '--supply-tolerance':
        corners.supplyTolerance = numberFlag(a, next(), OPTION_RULES.supplyTolerancePercent) / 100;
        break;
      case '--cold':
        corners.coldC = numberFlag(a, next(), OPTION_RULES.coldC);
        break;
      case '--hot':
        corners.hotC = numberFlag(a, next(), OPTION_RULES.hotC);
        break;
      case '--beta-low':
        corners.betaLow = numberFlag(a, next(), OPTION_RULES.betaLow);
        break;
      case '--beta-high':
        corners.betaHigh = numberFlag(a, next(), OPTION_RULES.betaHigh);
        break;
      case '--no-corners':
        corners.enabled = false;
        break;
      case '--process-kp':
        corners.processKpTolerance = numberFlag(a, next(), OPTION_RULES.processKpPercent) / 100;
        break;
      case '--process-vto':
        corners.processVtoShift = numberFlag(a, next(), OPTION_RULES.processVtoShiftV);
        break;
      case '--no-variation':
        (opts.analysis.variation ??= {}).enabled = false;
        break;
      case '--resistor-tolerance':
        (opts.analysis.variation ??= {}).resistorTolerance = numberFlag(a, next(), OPTION_RULES.resistorTolerancePercent) / 100;
        break;
      case '--yield-target':
        (opts.analysis.variation ??= {}).yieldTarget = numberFlag(a, next(), OPTION_RULES.yieldTargetPercent) / 100;
        break;
      case '--monte-carlo':
        opts.monteCarlo = { runs: numberFlag(a, next(), OPTION_RULES.monteCarloRuns), seed: opts.monteCarlo?.seed ?? 1 };
        break;
      case '--seed':
        opts.monteCarlo = { runs: opts.monteCarlo?.runs ?? 0, seed: numberFlag(a, next(), OPTION_RULES.seed) };
        break;
      case '--all-corners':
        opts.allCorners = true;
        break;
      case '--hand-analysis-steps':
        opts.handAnalysisSteps = true;
        break;
      case '--spread-breakdown':
        opts.spreadBreakdown = true;
        break;
      case '--workers': {
        const text = next();
        const v = parseDecimal(text);
        if (v === undefined || !Number.isInteger(v) || v < 1) throw new UsageError(`--workers takes a whole number of at least 1, got '${escapeControls(text ?? '')}'.`);
        // More threads than cores only share the cores: at most one per core.
        opts.workers = Math.min(v, coreCount());
        break;
      }
      case '--file-time-limit': {
        const text = next();
        const v = parseDecimal(text);
        if (v === undefined || !(v > 0) || v > 86_400) throw new UsageError(`--file-time-limit takes seconds above 0 and at most 86400, got '${escapeControls(text ?? '')}'.`);
        opts.fileTimeLimitMs = v * 1000;
        break;
      }
      case '--charts-per-file': {
        const text = next();
        if (command !== 'report') throw new UsageError("--charts-per-file is for 'report --format html'.");
        const v = text === 'all' ? Infinity : parseDecimal(text);
        if (v === undefined || !(v === Infinity || (Number.isInteger(v) && v >= 0))) throw new UsageError(`--charts-per-file takes a whole number (0 or more) or 'all', got '${escapeControls(text ?? '')}'.`);
        opts.chartsPerFile = v;
        break;
      }
      case '--indented':
        opts.indented = true;
        break;
      case '--compact':
        opts.indented = false;
        break;
      case '--severity': {
        const spec = next() ?? '';
        const m = /^([a-z0-9-]+)=(error|warning|info|hint|off)$/.exec(spec);
        if (!m) throw new UsageError(`--severity takes CODE=LEVEL (LEVEL: error, warning, info, hint or off), got '${escapeControls(spec)}'.`);
        if (!Object.hasOwn(catalogue, m[1]!)) throw new UsageError(`--severity names '${m[1]}', which is not a qpoint finding code (the README lists them).`);
        severities[m[1]!] = m[2] as Severity | 'off';
        break;
      }
      case '--fail-level': {
        const l = next();
        if (l !== 'error' && l !== 'warning' && l !== 'info' && l !== 'hint') throw new UsageError(`--fail-level takes error, warning, info or hint, got '${escapeControls(l ?? '')}'.`);
        opts.failLevel = l;
        break;
      }
      case '--include-root': {
        const dir = next();
        if (!dir) throw new UsageError('--include-root needs a folder.');
        if (isNetworkPath(dir)) throw new UsageError(`--include-root '${escapeControls(dir)}' is a network path; qpoint never reads those.`);
        opts.includeRoots.push(path.resolve(dir));
        break;
      }
      case '--include-anywhere':
        opts.includeAnywhere = true;
        break;
      case '--search-folder': {
        const dir = next();
        if (!dir) throw new UsageError('--search-folder needs a folder.');
        if (isNetworkPath(dir)) throw new UsageError(`--search-folder '${escapeControls(dir)}' is a network path; qpoint never reads those.`);
        const folder = path.resolve(dir);
        (opts.analysis.includeFolders ??= []).push(folder);
        opts.includeRoots.push(folder);
        break;
      }
      default:
        if (a.startsWith('-') && a !== '-') throw new UsageError(`Unknown option '${escapeControls(a)}' (put -- before a file name that starts with '-').`);
        opts.files.push(a);
    }
  }
  // Patterns the shell passed on unexpanded (quoted, or a shell that does not expand them) are expanded here.
  opts.files = expandFiles(opts.files);
  if (opts.files.length === 0) throw new UsageError(`'${command}' needs at least one netlist file.`);
  if (command === 'sweep') {
    if (!opts.device) throw new UsageError("'sweep' needs --output DEVICE: the mirror output whose characteristic to print.");
    if (opts.files.length !== 1) throw new UsageError(`'sweep' takes one netlist file, got ${opts.files.length}.`);
  }
  const crossed = crossCheckCorners(corners, { cold: '--cold', hot: '--hot' });
  if (crossed.length) throw new UsageError(crossed[0]!);
  if (opts.monteCarlo && opts.monteCarlo.runs === 0) throw new UsageError('--seed needs --monte-carlo N (the number of runs).');
  opts.analysis.corners = corners;
  opts.analysis.severities = severities;
  // Nothing but the JSON with --hand-analysis-steps shows the worked steps; formatting them costs a good part of the hand analysis.
  opts.analysis.handAnalysisSteps = opts.handAnalysisSteps;
  return opts;
}

interface FileResult {
  /** As given on the command line. */
  path: string;
  absolute: string;
  analysis?: Analysis;
  /** Set when the file itself could not be read. */
  readError?: string;
  /** Set when the analysis stopped with an exception (a defect of qpoint). */
  internalError?: string;
}

/** Zero-based position of an offset in a document the analysis read. */
function positionIn(analysis: Analysis | undefined, uri: string, offset: number, cache: Map<string, LineIndex>) {
  let index = cache.get(uri);
  if (!index) {
    index = new LineIndex(analysis?.documents[uri]?.text ?? '');
    cache.set(uri, index);
  }
  return index.positionAt(offset);
}

/** The path to print for a document: relative to the current directory when that is shorter. */
function displayPath(absolute: string): string {
  const rel = path.relative(process.cwd(), absolute);
  return rel && !rel.startsWith('..') ? rel : absolute;
}

/** Wall-clock time the command line spends sizing resistors for one file's missed targets (docs/RELIABILITY.md, "Cost per file"). */
export const SIZING_BUDGET_MS = 30_000;

function sizingBudgetSpent(uri: string, unsized: number): Finding {
  return {
    code: 'sizing-budget-spent',
    severity: 'info',
    message: `Resistor sizing stopped after its ${SIZING_BUDGET_MS / 1000} s budget for this file: ${unsized} finding${unsized === 1 ? ' has' : 's have'} no re-solved resistor fix. Open the netlist in the editor to get ${unsized === 1 ? 'it' : 'them'} one at a time.`,
    uri,
    span: { start: 0, end: 0 },
    data: { unsized, budgetSeconds: SIZING_BUDGET_MS / 1000 },
  };
}

/** One file read, analysed, sized and (with --monte-carlo) re-solved; a read refusal or an internal error is its result too. */
function analyseOne(opts: CliOptions, workspace: PathWorkspace, p: string): FileResult {
  const absolute = isNetworkPath(p) ? p : path.resolve(p);
  const read = workspace.readRoot(absolute);
  if ('refused' in read) return { path: p, absolute, readError: `Cannot read '${p}': it ${read.refused}.` };
  workspace.setRoot(absolute);
  try {
    const session = analyseSession({ uri: absolute, text: read.text }, workspace, opts.analysis, { oneShot: true });
    // A CI run wants the resistor suggestions too, so the solver-backed fixes are computed here
    // (only around a converged operating point: sizing re-solves from it), within the file's budget.
    const until = Date.now() + SIZING_BUDGET_MS;
    const unsized = attachAllSizingFixes(session, () => Date.now() > until);
    if (unsized > 0) session.analysis.findings.push(sizingBudgetSpent(absolute, unsized));
    if (opts.monteCarlo) monteCarloOf(session, opts.monteCarlo);
    return { path: p, absolute, analysis: session.analysis };
  } catch (e) {
    return { path: p, absolute, internalError: e instanceof Error ? (e.stack ?? e.message) : String(e) };
  }
}

/** The workspace of a run: the shared reading policy with the run's include roots. */
function runWorkspace(opts: CliOptions): PathWorkspace {
  return new PathWorkspace({ ...defaultPolicy([process.cwd(), ...opts.includeRoots]), anywhere: opts.includeAnywhere });
}

/**
 * What one file contributes to the output, in the format asked for. It is made where the file was
 * analysed (a worker thread, or this one) and carries no analysis, so a worker sends text; the
 * outcomes are assembled in the order of the files.
 */
export interface FileOutcome {
  path: string;
  /** The file could not be read or its analysis stopped (exit code 3). */
  failed: boolean;
  /** A finding at or above --fail-level. */
  failing: boolean;
  /** The stack of an internal error (or why a worker stopped), printed on stderr. */
  internalError?: string;
  /** 'check' text: the finding lines; 'report' text: the file's report; html and markdown: the file's section. */
  text?: string;
  /** JSON: the file's entry of the document (in this thread). */
  json?: unknown;
  /** JSON: the file's entry already written, in pieces (from a worker: text crosses threads, objects with methods do not). */
  jsonPieces?: string[];
  /** SARIF: the file's results and the rule ids they use. */
  sarif?: { results: unknown[]; codes: string[] };
}

/** The file's outcome from its result; `written` writes its JSON entry out (a worker must send text). */
function outcomeOf(opts: CliOptions, index: number, r: FileResult, written: boolean): FileOutcome {
  const failRank = SEVERITY_RANK[opts.failLevel];
  const out: FileOutcome = {
    path: r.path,
    failed: !!(r.readError || r.internalError),
    failing: !!r.analysis?.findings.some((f: Finding) => SEVERITY_RANK[f.severity] <= failRank),
    ...(r.internalError ? { internalError: r.internalError } : {}),
  };
  if (opts.format === 'json') {
    const entry = jsonFileEntry(r, opts);
    if (!written) out.json = entry;
    else {
      // Written at the depth of a file in the document (version, files: [ here ]), unescaped: the document's writer escapes.
      const pieces: string[] = [];
      writeJson(entry, (t) => pieces.push(t), { indent: jsonIndent(opts), depth: 2 });
      out.jsonPieces = pieces;
    }
  } else if (opts.format === 'sarif') out.sarif = sarifParts(r);
  else if (opts.format === 'html') out.text = htmlSection(reportFiles([r])[0]!, index, { maxCharts: opts.chartsPerFile });
  else if (opts.format === 'markdown') out.text = markdownSection(reportFiles([r])[0]!);
  else if (opts.command === 'report') out.text = textReport(r);
  else out.text = textLines([r]).join('\n');
  return out;
}

/** Analyses one file and gives its outcome with the JSON written out: the work of a batch worker (batch-worker.ts). */
export function checkFileForWorker(opts: CliOptions, workspace: PathWorkspace, index: number, p: string): FileOutcome {
  return outcomeOf(opts, index, analyseOne(opts, workspace, p), true);
}

/** The options as a batch worker receives them (a structured clone): name-keyed tables get their null prototype back. */
export function optionsInWorker(cloned: CliOptions): CliOptions {
  const severities: Record<string, Severity | 'off'> = Object.create(null);
  Object.assign(severities, cloned.analysis.severities ?? {});
  return { ...cloned, analysis: { ...cloned.analysis, severities } };
}

export { runWorkspace as workspaceForWorker };

/** Wall-clock seconds one file may take in a batch worker before the worker is stopped and the file reported (`--file-time-limit`). */
export const DEFAULT_FILE_TIME_LIMIT_S = 600;

/** The cores this process may use. */
function coreCount(): number {
  return Math.max(1, typeof os.availableParallelism === 'function' ? os.availableParallelism() : os.cpus().length);
}

/** Threads a run uses: --workers, else one per core; never more than the files; 1 for a single file. */
function workerCount(opts: CliOptions): number {
  return Math.max(1, Math.min(opts.workers ?? coreCount(), opts.files.length));
}

/** The files one after another in this thread, with the progress line on a terminal. */
function outcomesInProcess(opts: CliOptions): FileOutcome[] {
  const workspace = runWorkspace(opts);
  // A batch run on a terminal shows which file it is on; the line is cleared before any output.
  const progress = new Progress(opts.files.length);
  const outcomes = opts.files.map((p, i) => {
    progress.update(i, escapeControls(p));
    return outcomeOf(opts, i, analyseOne(opts, workspace, p), false);
  });
  progress.done();
  return outcomes;
}

/** The files on a pool of worker threads (dist/batch-worker.js), outcomes in the files' order. */
async function outcomesInWorkers(opts: CliOptions, workers: number): Promise<FileOutcome[]> {
  const progress = new Progress(opts.files.length);
  const outcomes = await runPool<FileOutcome>({
    script: path.join(__dirname, 'batch-worker.js'),
    workerData: { options: opts },
    workers,
    files: opts.files,
    fileTimeLimitMs: opts.fileTimeLimitMs,
    started: (index, done) => progress.update(done, escapeControls(opts.files[index]!)),
    // A worker that crashed, ended or overran costs this file only; it reads as an internal error of the file.
    failed: (f) => {
      const absolute = isNetworkPath(f.path) ? f.path : path.resolve(f.path);
      return outcomeOf(opts, f.index, { path: f.path, absolute, internalError: `${f.reason.charAt(0).toUpperCase()}${f.reason.slice(1)}.` }, false);
    },
  });
  progress.done();
  return outcomes;
}

interface JsonDiagnostic {
  code: string;
  severity: Severity;
  message: string;
  range: { start: { line: number; character: number }; end: { line: number; character: number } };
  /** Present when the finding lies in another file than the one checked (an included file). */
  path?: string;
  related?: { path: string; message: string; range: JsonDiagnostic['range'] }[];
  data?: Record<string, unknown>;
  /** Edits that resolve the finding, best first when one is marked preferred. */
  fixes?: { title: string; preferred?: boolean; disabled?: string; edits: { path: string; range: JsonDiagnostic['range']; newText: string }[] }[];
}

/** Each result's diagnostics, worked out once however many formats write them. */
const diagnosticsOf = new WeakMap<FileResult, JsonDiagnostic[]>();

function toJsonDiagnostics(r: FileResult): JsonDiagnostic[] {
  let d = diagnosticsOf.get(r);
  if (!d) diagnosticsOf.set(r, (d = jsonDiagnostics(r)));
  return d;
}

function jsonDiagnostics(r: FileResult): JsonDiagnostic[] {
  const zero = { line: 0, character: 0 };
  if (r.readError) return [{ code: 'file-unreadable', severity: 'error', message: r.readError, range: { start: zero, end: zero } }];
  if (r.internalError) {
    const first = r.internalError.split('\n')[0];
    return [{ code: 'analysis-stopped', severity: 'error', message: `qpoint stopped with an internal error while analysing this file (please report it): ${first}`, range: { start: zero, end: zero } }];
  }
  const a = r.analysis!;
  const cache = new Map<string, LineIndex>();
  const range = (uri: string, span: { start: number; end: number }) => ({
    start: positionIn(a, uri, span.start, cache),
    end: positionIn(a, uri, span.end, cache),
  });
  return a.findings.map((f) => {
    const d: JsonDiagnostic = { code: f.code, severity: f.severity, message: f.message, range: range(f.uri, f.span) };
    if (f.uri !== a.uri) d.path = displayPath(f.uri);
    if (f.related?.length) d.related = f.related.map((rl) => ({ path: displayPath(rl.uri), message: rl.message, range: range(rl.uri, rl.span) }));
    if (f.data) d.data = f.data;
    // A fix that could not be offered carries the reason; the command line says it in the finding's message.
    for (const x of f.fixes ?? []) if (x.disabled) d.message += ` ${x.disabled}`;
    const usable = f.fixes?.filter((x) => !x.disabled) ?? [];
    if (usable.length) {
      d.fixes = usable.map((x) => ({
        title: x.title,
        ...(x.preferred ? { preferred: true } : {}),
        edits: x.edits.map((e) => ({ path: displayPath(e.uri), range: range(e.uri, e.span), newText: e.newText })),
      }));
    }
    return d;
  });
}

/**
 * The version of the CLI's JSON document: 2 summarises corners per output unless `--all-corners`
 * asks for them all; 3 leaves each estimate's `steps` out unless `--hand-analysis-steps` asks for
 * them, and each output's spread `sensitivities` and all but its three largest `contributors` unless
 * `--spread-breakdown` asks for them; 4 names a corner in the summaries by its ASCII key only, the
 * file's `corners` giving each key's label and conditions once (and is written on one line unless
 * `--indented`), and leaves out of the spreads under a structure what their place says.
 */
export const JSON_VERSION = 4;

/** What the JSON document holds beyond its default content. */
export interface JsonDetail {
  /** Every corner's results, besides the per-output summary. */
  allCorners?: boolean;
  /** The hand analysis's worked steps in each structure's estimate. */
  handAnalysisSteps?: boolean;
  /** Each output's every ranked spread contributor (else the three largest) and largest sensitivities. */
  spreadBreakdown?: boolean;
}

/**
 * The CLI's JSON document. Field meanings are documented in the README. The operating point and
 * the power table are `JsonEntries`, produced while `writeJson` writes them (from the solver's
 * vectors, without building the point's name-keyed tables); each structure's entry is made when it
 * is written (`toJSON`) and dropped after.
 */
export function jsonReport(results: FileResult[], options: JsonDetail = {}): unknown {
  return jsonDocument(results.map((r) => jsonFileEntry(r, options)));
}

/** The JSON document around its files' entries (each an entry, or a `JsonText` a worker wrote). */
function jsonDocument(files: unknown[]): unknown {
  return { version: JSON_VERSION, tool: 'qpoint', caution: CAUTION, files };
}

/** A file's entry of the JSON document from its outcome. */
function jsonOf(o: FileOutcome): unknown {
  return o.jsonPieces ? new JsonText(o.jsonPieces) : o.json;
}

/**
 * One file's entry of the JSON document. What is written later (the streamed tables, the
 * structures) holds the parts it reads, never the Analysis, so the parsed documents, symbols and
 * findings can be collected before the document is written (about a tenth of a large array's heap).
 */
function jsonFileEntry(r: FileResult, options: JsonDetail): unknown {
  const a = r.analysis;
  const op = a?.operatingPoint;
  const reader = op && a.circuit ? pointReader(a.circuit, op) : undefined;
  const elements = a?.circuit?.elements;
  const analysisOptions = a?.options;
  const keyOf = cornerKeys();
  const corners = a ? cornersForJson(a.structures, keyOf) : undefined;
  return {
    path: r.path,
    diagnostics: toJsonDiagnostics(r),
    ...(op && a ? { operatingPoint: pointForJson(op) } : {}),
    ...(op && elements && analysisOptions && reader
      ? {
          // Streamed from the vectors; a netlist that names two elements alike gets the table (one key per name).
          power: a.circuit && hasUniqueNames(a.circuit)
            ? new JsonEntries(() => new TableEntries(powerColumns(elements, powerReader(op, reader), analysisOptions)), true)
            : powerTable(elements, op.devices, analysisOptions),
        }
      : {}),
    ...(corners ? { corners } : {}),
    ...(a ? { structures: structuresForJson(a.structures, options, keyOf) } : {}),
    ...(a?.variation ? { variation: variationForJson(a.variation, a.structures, options) } : {}),
  };
}

/**
 * The file's spread analysis as JSON: each output's figures are written once. An output of a
 * structure stands in that structure's `variation` (iref, iout, voltages); the file level keeps
 * the sources, the effort, the Monte Carlo run and the outputs that belong to no structure listed
 * (`outputsOutsideStructures`). Writing every output twice made the spread analysis about 45 MB of
 * a 20,000-element array's 99 MB document (docs/PERFORMANCE.md).
 */
function variationForJson(v: VariationResult, structures: readonly Structure[], detail: JsonDetail): unknown {
  const shown = new Set(structures.filter((s) => s.variation).map((s) => s.id));
  // Each source's entry made when written (from the analysis's columns while its list is not made).
  const sources = sourceSummaries(v);
  return {
    outputsOutsideStructures: v.outputs.filter((o) => !o.structure || !shown.has(o.structure)).map((o) => spreadForJson(o, detail)),
    sources: new JsonItems(sources.length, sources.at),
    stats: v.stats,
    ...(v.monteCarlo ? { monteCarlo: v.monteCarlo } : {}),
  };
}

/** Each element's dissipation at `op`: from the solver's vectors without building its record where the point has them. */
function powerReader(op: OperatingPoint, reader: PointReader): (e: number) => number | undefined {
  const v = pointVectors(op);
  return v ? (e) => dissipationAt(v, e) : (e) => dissipation(reader.record(e));
}

/** The operating point as JSON shows it, its tables streamed from the vectors when it has them. */
function pointForJson(op: OperatingPoint): unknown {
  const v = pointVectors(op);
  if (!v) return op;
  return new JsonEntries(function* () {
    for (const k of Object.keys(op)) {
      if (k === 'nodes') yield [k, new JsonEntries(() => new TableEntries(v.nodeTable()), true)];
      else if (k === 'devices') yield [k, new JsonEntries(() => new TableEntries(v.deviceTable()), true)];
      else yield [k, (op as unknown as Record<string, unknown>)[k]];
    }
  });
}

/** A corner label's key (`cornerKey`), worked out once per label: a file's structures share the same few corners. */
function cornerKeys(): (label: string) => string {
  const keys = new Map<string, string>();
  return (label) => {
    let k = keys.get(label);
    if (k === undefined) keys.set(label, (k = cornerKey(label)));
    return k;
  };
}

/**
 * The corners a file's structures were solved at, once for the file: by ASCII key, the corner's label
 * as the messages name it and its conditions (`supplyScale`, `temperatureC`, `betaScale`, and
 * `process` where the MOS process is not typical). The structures' corner summaries name corners by
 * key only; repeating each label there made up a tenth of a large array's summaries, and its
 * non-ASCII characters made the writer handle nearly every chunk of the document as two-byte text.
 * Undefined when no structure was solved at corners.
 */
function cornersForJson(structures: readonly Structure[], keyOf: (label: string) => string): Record<string, unknown> | undefined {
  const table: Record<string, unknown> = nameTable();
  let any = false;
  const add = (label: string, supplyScale: number, temperatureC: number, betaScale: number, process: string | undefined): void => {
    const key = keyOf(label);
    if (table[key] !== undefined) return;
    table[key] = { label, supplyScale, temperatureC, betaScale, ...(process ? { process } : {}) };
    any = true;
  };
  // The structures of one analysis share one corner axis: each axis (or list of records) is read once.
  const axesSeen = new Set<unknown>();
  for (const s of structures) {
    const cols = cornerColumns(s);
    if (cols) {
      if (axesSeen.has(cols.axis)) continue;
      axesSeen.add(cols.axis);
      const ax = cols.axis;
      ax.labels.forEach((label, k) => add(label, ax.supplyScale[k]!, ax.temperatureC[k]!, ax.betaScale[k]!, ax.process[k]));
    } else for (const c of s.corners) add(c.label, c.supplyScale, c.temperatureC, c.betaScale, c.process);
  }
  return any ? table : undefined;
}

/** A file's structures as JSON shows them: each entry made when it is written (`JsonItems`) and dropped after. */
function structuresForJson(structures: readonly Structure[], detail: JsonDetail, keyOf: (label: string) => string): JsonItems {
  return new JsonItems(structures.length, (i) => structureForJson(structures[i]!, detail, keyOf));
}

/**
 * A structure as JSON shows it: every field, with `corners` replaced by `cornerSummary` (per output
 * the lowest and highest current and the lowest headroom, each with its corner, and where it leaves
 * its region) unless every corner is asked for, when both are written, and the estimate without its
 * `steps` unless they are asked for. A plain object of a few hundred values, so the writer hands it
 * to the native JSON writer in one call (a structure written member by member cost about twice as much).
 */
function structureForJson(s: Structure, detail: JsonDetail, keyOf: (label: string) => string): Record<string, unknown> {
  const keys = Object.keys(s);
  if (sameNames(keys, STRUCTURE_FIELDS)) return structureEntry(s, detail, keyOf);
  const out: Record<string, unknown> = {};
  const fields = s as unknown as Record<string, unknown>;
  for (let i = 0; i < keys.length; i++) {
    const k = keys[i]!;
    if (k === 'corners') {
      const summary = cornerSummary(s, keyOf);
      if (summary) out['cornerSummary'] = summary;
      if (detail.allCorners) out['corners'] = s.corners;
    } else if (k === 'estimate' && s.estimate && !detail.handAnalysisSteps) {
      out[k] = estimateForJson(s.estimate);
    } else if (k === 'variation' && s.variation) {
      out[k] = structureSpreadForJson(s.variation, detail);
    } else {
      // A member left undefined (a kind's optional part: `parts`, `params`, `voltages`, `discrepancy`, `startup`) is
      // one the native writer drops; copied, it took the entry past the members V8 adds by name to a fast object
      // (20 of a mirror's, where the limit is about 19), and the native writer took every entry by its slow path.
      const v = fields[k];
      if (v !== undefined) out[k] = v;
    }
  }
  return out;
}

/**
 * A structure's fields in the order recognition makes them (`toStructure`, structures/recognise.ts). A structure whose
 * own names are these, in this order, gets its entry from `structureEntry`; any other (a structure copied or made
 * elsewhere) is copied name by name by `structureForJson`, to the same text.
 */
const STRUCTURE_FIELDS: readonly string[] = ['id', 'kind', 'technology', 'devices', 'roles', 'reference', 'outputs', 'parts', 'params', 'voltages', 'instance', 'headroom', 'compliance', 'outputResistance', 'corners', 'solved', 'estimate', 'discrepancy', 'startup', 'variation'];

/**
 * `structureForJson` of a structure with `STRUCTURE_FIELDS`, made by one object literal: the copy name by name added
 * each member by a store with a computed name, which V8 does through its runtime (a look-up of the next layout per
 * member, about 20 per structure). A member left undefined is one the native writer drops, as the copy did.
 */
function structureEntry(s: Structure, detail: JsonDetail, keyOf: (label: string) => string): Record<string, unknown> {
  const estimate = s.estimate && !detail.handAnalysisSteps ? estimateForJson(s.estimate) : s.estimate;
  return {
    id: s.id,
    kind: s.kind,
    technology: s.technology,
    devices: s.devices,
    roles: s.roles,
    reference: s.reference,
    outputs: s.outputs,
    parts: s.parts,
    params: s.params,
    voltages: s.voltages,
    instance: s.instance,
    headroom: s.headroom,
    compliance: s.compliance,
    outputResistance: s.outputResistance,
    cornerSummary: cornerSummary(s, keyOf),
    corners: detail.allCorners ? s.corners : undefined,
    solved: s.solved,
    estimate,
    discrepancy: s.discrepancy,
    startup: s.startup,
    variation: s.variation ? structureSpreadForJson(s.variation, detail) : s.variation,
  };
}

/** Whether `names` are `expected`, in that order. */
function sameNames(names: readonly string[], expected: readonly string[]): boolean {
  if (names.length !== expected.length) return false;
  for (let i = 0; i < names.length; i++) if (names[i] !== expected[i]) return false;
  return true;
}

/** An estimate's fields in the order the hand analysis makes them for the mirrors (`steps` left out of the JSON by default). */
const ESTIMATE_FIELDS: readonly string[] = ['iref', 'iout', 'vControl', 'irefShortcut', 'steps', 'irefFrom', 'starved', 'supply', 'outputEdge'];

/** A structure's estimate without its `steps`: by one literal when it has `ESTIMATE_FIELDS`, else copied name by name. */
function estimateForJson(estimate: NonNullable<Structure['estimate']>): Record<string, unknown> {
  const e = estimate as unknown as Record<string, unknown>;
  if (!sameNames(Object.keys(e), ESTIMATE_FIELDS)) return withoutMember(e, 'steps');
  return { iref: e['iref'], iout: e['iout'], vControl: e['vControl'], irefShortcut: e['irefShortcut'], irefFrom: e['irefFrom'], starved: e['starved'], supply: e['supply'], outputEdge: e['outputEdge'] };
}

/**
 * `o`'s own enumerable members but `left` (what JSON shows of an object rest `{ [left]: _, ...rest }`), copied by a
 * loop: the rest was a runtime call per structure.
 */
function withoutMember(o: Record<string, unknown>, left: string): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  const keys = Object.keys(o);
  for (let i = 0; i < keys.length; i++) {
    const k = keys[i]!;
    if (k !== left) out[k] = o[k];
  }
  return out;
}

/** A structure's spread as JSON shows it: every output (`iref`, and each of `iout` and `voltages`) through `spreadForJson`. */
function structureSpreadForJson(v: NonNullable<Structure['variation']>, detail: JsonDetail): unknown {
  const fields = v as unknown as Record<string, unknown>;
  const keys = Object.keys(v);
  // A mirror's spread (its reference current and its outputs' currents) by one literal; any other member by name.
  if (sameNames(keys, MIRROR_SPREAD_FIELDS)) {
    const iref = fields['iref'] as OutputVariation | undefined;
    return { iref: iref === undefined ? undefined : spreadForJson(iref, detail, true), iout: spreadTableForJson(fields['iout'], detail) };
  }
  const out: Record<string, unknown> = {};
  for (let i = 0; i < keys.length; i++) {
    const k = keys[i]!;
    const x = fields[k];
    if (x === undefined) continue;
    if (k === 'iref') out[k] = spreadForJson(x as OutputVariation, detail, true);
    else out[k] = spreadTableForJson(x, detail);
  }
  return out;
}

/** The members of a mirror's spread, in the order the spread analysis makes them. */
const MIRROR_SPREAD_FIELDS: readonly string[] = ['iref', 'iout'];

/** A name-keyed table of a structure's output spreads (`iout`, `voltages`) as JSON shows it; undefined stays undefined (left out). */
function spreadTableForJson(x: unknown, detail: JsonDetail): unknown {
  if (x === undefined) return undefined;
  const outputs = x as Record<string, OutputVariation>;
  const table = nameTable<unknown>();
  const names = Object.keys(outputs);
  for (let j = 0; j < names.length; j++) table[names[j]!] = spreadForJson(outputs[names[j]!]!, detail, true);
  return table;
}

/** How many of an output's ranked spread contributors the JSON keeps without `--spread-breakdown`: the three the hover names. */
const CONTRIBUTORS_BY_DEFAULT = 3;

/**
 * What an output's spread says of itself that its place in a structure's `variation` already says:
 * `structure` (the structure's id), `output` and `element` (`IREF` and the reference device for
 * `iref`, the member's name in `iout` and `voltages`), `unit` (A for currents, V for voltages) and
 * `key` (`<id> iref`, `<id> out <device>`, `<id> voltage <name>`). About a twelfth of a large
 * array's structures; written for the outputs outside structures, which have no such place.
 */
const IMPLIED_IN_STRUCTURE: readonly string[] = ['structure', 'output', 'element', 'unit', 'key'];

/**
 * One output's spread as JSON shows it: its three largest contributors (what dominates, as the
 * hover says it) and no `sensitivities`, unless `--spread-breakdown` asks for every contributor
 * (at most 8) and the largest sensitivities (together about half of a large array's document; a
 * CI gate reads σ, worst case, drift, yield and what dominates); inside a structure, without what
 * its place says (`IMPLIED_IN_STRUCTURE`).
 */
function spreadForJson(o: OutputVariation, detail: JsonDetail, inStructure = false): unknown {
  if (detail.spreadBreakdown && !inStructure) return o;
  // Member by member in the output's order, the contributors last unless all are written (a rest
  // and a spread of the object cost about as much as writing it, for 10,000 outputs of a large array).
  const fields = o as unknown as Record<string, unknown>;
  const breakdown = !!detail.spreadBreakdown;
  const keys = Object.keys(o);
  if (inStructure && !breakdown && sameNames(keys, SPREAD_FIELDS)) return structureOutputSpread(o);
  const out: Record<string, unknown> = {};
  for (let i = 0; i < keys.length; i++) {
    const k = keys[i]!;
    if (inStructure && isOneOf(k, IMPLIED_IN_STRUCTURE)) continue;
    if (breakdown || (k !== 'contributors' && k !== 'sensitivities')) out[k] = fields[k];
  }
  if (!breakdown) out['contributors'] = leadingContributors(o, CONTRIBUTORS_BY_DEFAULT);
  return out;
}

/** An output's spread fields in the order the spread analysis makes them (variation/index.ts). */
const SPREAD_FIELDS: readonly string[] = ['output', 'key', 'unit', 'structure', 'element', 'nominal', 'sigma', 'sigmaRelative', 'worstCase', 'worstCaseRelative', 'tempcoPpmPerC', 'supplyPercentPerVolt', 'contributors', 'sensitivities'];

/**
 * `spreadForJson` of a structure's output with `SPREAD_FIELDS` and no `--spread-breakdown`, by one literal: what its
 * place does not say (`IMPLIED_IN_STRUCTURE` left out), its three largest contributors, no sensitivities.
 */
function structureOutputSpread(o: OutputVariation): unknown {
  return {
    nominal: o.nominal,
    sigma: o.sigma,
    sigmaRelative: o.sigmaRelative,
    worstCase: o.worstCase,
    worstCaseRelative: o.worstCaseRelative,
    tempcoPpmPerC: o.tempcoPpmPerC,
    supplyPercentPerVolt: o.supplyPercentPerVolt,
    contributors: leadingContributors(o, CONTRIBUTORS_BY_DEFAULT),
  };
}

/** A structure's corners summarised per output, or undefined when none were solved. */
function cornerSummary(s: Structure, keyOf: (label: string) => string): unknown {
  const cols = cornerColumns(s);
  if (cols) {
    const axis = namedAxis(cols.axis);
    if (axis.keys.length === 0) return undefined;
    return { corners: axis.keys.length, converged: axis.converged, outputs: summariseOutputs(cols, axis.keys) };
  }
  if (s.corners.length === 0) return undefined;
  return { corners: s.corners.length, converged: s.corners.filter((c) => c.converged).length, outputs: summariseCornerRecords(s, keyOf) };
}

/** A corner axis's keys (`cornerKey` of each label) and how many of its corners converged: worked out once per axis, which a file's structures share. */
const axisNames = new WeakMap<CornerAxis, { keys: string[]; converged: number }>();

function namedAxis(axis: CornerAxis): { keys: string[]; converged: number } {
  let named = axisNames.get(axis);
  if (!named) {
    let converged = 0;
    for (let k = 0; k < axis.converged.length; k++) converged += axis.converged[k]!;
    axisNames.set(axis, (named = { keys: axis.labels.map(cornerKey), converged }));
  }
  return named;
}

/**
 * A corner label as a plain-ASCII key: 'supply −5 %, −40 °C, beta ×0.5' → 'supply_-5%,-40C,beta_x0.5',
 * 'VCC alone +5 %' → 'VCC_alone_+5%'; any other character outside printable ASCII becomes uXXXX.
 */
export function cornerKey(label: string): string {
  return label
    .replace(/\u2212/g, '-')
    .replace(/ °C/g, 'C')
    .replace(/ %/g, '%')
    .replace(/, /g, ',')
    .replace(/×/g, 'x')
    .replace(/ /g, '_')
    .replace(/[^\x21-\x7e]/g, (c) => `u${c.charCodeAt(0).toString(16).padStart(4, '0')}`);
}

/** The per-output summary from a structure's corner records (corners that did not come as columns), corners named by `keyOf`. */
function summariseCornerRecords(s: Structure, keyOf: (label: string) => string): OutputCornerSummary[] {
  return s.outputs.map((o) => {
    let minCurrent: CornerResult | undefined;
    let maxCurrent: CornerResult | undefined;
    let minHeadroom: CornerResult | undefined;
    const outOfRegionAt: string[] = [];
    for (const c of s.corners) {
      if (!c.converged) continue;
      if (!minCurrent || (c.iout[o.device] ?? 0) < (minCurrent.iout[o.device] ?? 0)) minCurrent = c;
      if (!maxCurrent || (c.iout[o.device] ?? 0) > (maxCurrent.iout[o.device] ?? 0)) maxCurrent = c;
      if (!minHeadroom || (c.headroom[o.device] ?? 0) < (minHeadroom.headroom[o.device] ?? 0)) minHeadroom = c;
      if (c.outOfRegion.includes(o.device)) outOfRegionAt.push(keyOf(c.label));
    }
    const r: Omit<OutputCornerSummary, 'outOfRegionAt'> & { outOfRegionAt?: string[] } = { device: o.device };
    if (minCurrent) r.minCurrent = { value: minCurrent.iout[o.device] ?? 0, corner: keyOf(minCurrent.label) };
    if (maxCurrent) r.maxCurrent = { value: maxCurrent.iout[o.device] ?? 0, corner: keyOf(maxCurrent.label) };
    if (minHeadroom) r.minHeadroom = { value: minHeadroom.headroom[o.device] ?? 0, corner: keyOf(minHeadroom.label) };
    r.outOfRegionAt = outOfRegionAt;
    return r as OutputCornerSummary;
  });
}

/** The finding catalogue, built on first use (it does not change while the process runs). */
let catalogueOnce: ReturnType<typeof findingCatalogue> | undefined;

const SARIF_LEVEL: Record<Severity, string> = { error: 'error', warning: 'warning', info: 'note', hint: 'note' };

/** SARIF 2.1.0 (OASIS standard): one run, one result per finding, 1-based UTF-16 columns. */
export function sarifReport(results: FileResult[]): unknown {
  return sarifDocument(results.map(sarifParts));
}

/** One file's SARIF results and the rule ids they use. */
function sarifParts(r: FileResult): { results: unknown[]; codes: string[] } {
  const codes = new Set<string>();
  const sarifResults: unknown[] = [];
  for (const d of toJsonDiagnostics(r)) {
    codes.add(d.code);
    const file = d.path ?? displayPath(r.absolute);
    const region = (rg: JsonDiagnostic['range']) => ({
      startLine: rg.start.line + 1,
      startColumn: rg.start.character + 1,
      endLine: rg.end.line + 1,
      endColumn: rg.end.character + 1,
    });
    sarifResults.push({
      ruleId: d.code,
      level: SARIF_LEVEL[d.severity],
      message: { text: d.message },
      locations: [
        {
          physicalLocation: {
            artifactLocation: { uri: file.split(path.sep).join('/') },
            region: region(d.range),
          },
        },
      ],
      ...(d.fixes
        ? {
            fixes: d.fixes.map((x) => ({
              description: { text: x.title },
              artifactChanges: x.edits.map((e) => ({
                artifactLocation: { uri: e.path.split(path.sep).join('/') },
                replacements: [{ deletedRegion: region(e.range), insertedContent: { text: e.newText } }],
              })),
            })),
          }
        : {}),
    });
  }
  return { results: sarifResults, codes: [...codes] };
}

/** The SARIF document of a run from its files' parts, in the files' order; one rule per code used. */
function sarifDocument(parts: { results: unknown[]; codes: string[] }[]): unknown {
  const catalogue = (catalogueOnce ??= findingCatalogue());
  const codes = new Set<string>();
  const sarifResults: unknown[] = [];
  for (const part of parts) {
    for (const c of part.codes) codes.add(c);
    pushAll(sarifResults, part.results);
  }
  const rules = [...codes].sort().map((id) => ({
    id,
    shortDescription: { text: catalogue[id]?.summary ?? id },
    defaultConfiguration: { level: SARIF_LEVEL[catalogue[id]?.severity ?? 'warning'] },
  }));
  return {
    version: '2.1.0',
    $schema: 'https://json.schemastore.org/sarif-2.1.0.json',
    runs: [{ tool: { driver: { name: 'qpoint', version: VERSION, rules } }, columnKind: 'utf16CodeUnits', results: sarifResults }],
  };
}

function textLines(results: FileResult[]): string[] {
  const lines: string[] = [];
  for (const r of results) {
    for (const d of toJsonDiagnostics(r)) {
      const file = d.path ?? r.path;
      lines.push(escapeControls(`${file}:${d.range.start.line + 1}:${d.range.start.character + 1} ${d.severity} ${d.code} ${d.message}`));
    }
  }
  return lines;
}

// The view's formatting rules (shared-analysis/src/view/format.ts), as in the hover and the labels.
const amps = (v: number) => formatQuantity(v, 'A');
const volts = (v: number) => formatQuantity(v, 'V');

/** The human-readable bias report of one file. */
export function textReport(r: FileResult): string {
  const out: string[] = [];
  if (!r.analysis) return toJsonDiagnostics(r).map((d) => escapeControls(`${r.path}: ${d.message}`)).join('\n');
  const a = r.analysis;
  const op = a.operatingPoint;
  out.push(`${r.path} — ${a.circuit?.title || '(no title)'}`);
  if (op) {
    out.push(
      `Operating point at ${op.temperatureC} °C: ${op.converged ? 'converged' : 'did NOT converge'} in ${op.iterations} Newton iterations` +
        (op.fallbacks.length ? ` (fallbacks: ${op.fallbacks.join(', ')})` : ''),
    );
  } else {
    out.push('Operating point: not solved.');
  }
  if (a.structures.length === 0) out.push('No mirrors or reference branches recognised.');
  for (const s of a.structures) {
    // A source whose own device is its output (a diode-referenced source) has no arrow to draw.
    const outs = s.outputs
      .filter((o) => o.device !== s.reference.device)
      .map((o) => (typeof o.ratio === 'number' && o.ratio !== 1 ? `${o.device} (×${+o.ratio.toPrecision(4)})` : o.device))
      .join(', ');
    // A self-biased or regulated kind sets its current by its own equation, whatever sits on its reference node.
    const feed = s.estimate?.irefFrom === 'own-equation'
      ? `current set by its own equation${s.reference.elements.length ? ` through ${s.reference.elements.join(', ')}` : ''}`
      : s.reference.feed === 'resistor' && s.reference.rail
      ? `fed by ${s.reference.elements.join(' + ')} from ${s.reference.rail.node} (${volts(s.reference.rail.volts)})`
      : `fed by ${s.reference.feed.replace('-', ' ')}${s.reference.elements.length ? ` ${s.reference.elements.join(', ')}` : ''}`;
    out.push('');
    out.push(`${capitalised(kindName(s.kind))} (${technologyWords(s.technology)}) ${s.reference.device}${outs ? ` → ${outs}` : ''}; ${feed}`);
    const est = s.estimate;
    const sol = s.solved;
    const refLine = ['  IREF'.padEnd(12)];
    if (est) refLine.push(`estimate ${amps(est.iref)}` + (est.irefShortcut !== undefined ? ` (0.7 V shortcut ${amps(est.irefShortcut)})` : ''));
    if (sol) refLine.push(`solved ${amps(sol.iref)}`);
    out.push(refLine.join('  '));
    if (s.variation?.iref) out.push(`              spread: ${spreadText(s.variation.iref)}`);
    const irefMc = s.variation?.iref ? histogramText(s.variation.iref) : undefined;
    if (irefMc) out.push(`              ${irefMc}`);
    for (const o of s.outputs) {
      const cells = [`  ${o.device}`.padEnd(12)];
      if (est?.iout[o.device] !== undefined) cells.push(`estimate ${amps(est.iout[o.device])}`);
      if (sol?.iout[o.device] !== undefined) cells.push(`solved ${amps(sol.iout[o.device])}`);
      if (s.headroom[o.device] !== undefined) cells.push(`headroom: ${formatHeadroom(s.headroom[o.device], s.technology)}`);
      const rec = op?.devices[o.device];
      if (rec && 'region' in rec) cells.push(recordIsOff(rec) ? 'off' : rec.region);
      cells.push(`(${outputWords(s, o)})`);
      out.push(cells.join('  '));
      const v = s.variation?.iout[o.device];
      if (v) out.push(`              spread: ${spreadText(v)}`);
      const mc = v ? histogramText(v) : undefined;
      if (mc) out.push(`              ${mc}`);
    }
    for (const line of derivedVoltageLines(s)) out.push(`  ${line}`);
    for (const v of Object.values(s.variation?.voltages ?? {})) out.push(`              ${v.output} spread: ${spreadText(v)}`);
    const startup = startupLine(s);
    if (startup) out.push(`  ${startup}`);
    if (s.discrepancy) out.push(`  note: ${s.discrepancy}`);
    if (s.corners.length) {
      for (const o of s.outputs) {
        const vals = s.corners.filter((c) => c.converged && c.iout[o.device] !== undefined);
        if (!vals.length) continue;
        const lo = vals.reduce((m, c) => (c.iout[o.device] < m.iout[o.device] ? c : m));
        const hi = vals.reduce((m, c) => (c.iout[o.device] > m.iout[o.device] ? c : m));
        const worst = vals.reduce((m, c) => ((c.headroom[o.device] ?? Infinity) < (m.headroom[o.device] ?? Infinity) ? c : m));
        out.push(
          `  corners ${o.device}: ${amps(lo.iout[o.device])} (${lo.label}) … ${amps(hi.iout[o.device])} (${hi.label}); ` +
            `least headroom ${formatHeadroom(worst.headroom[o.device] ?? NaN, s.technology)} (${worst.label})`,
        );
      }
    }
  }
  const diags = toJsonDiagnostics(r);
  out.push('');
  out.push(diags.length ? `Findings (${diags.length}):` : 'Findings: none.');
  for (const d of diags) {
    out.push(`  ${d.path ?? r.path}:${d.range.start.line + 1}:${d.range.start.character + 1} ${d.severity} ${d.code} ${d.message}`);
    for (const x of d.fixes ?? []) out.push(`      fix${x.preferred ? ' (preferred)' : ''}: ${x.title}`);
  }
  // Titles, names and messages come from the netlist: never let them write control sequences.
  return out.map(escapeControls).join('\n');
}

const VERSION = '0.1.0';

/** Spaces per level of the JSON and SARIF documents: none (one line) unless `--indented`. */
function jsonIndent(opts: CliOptions): number {
  return opts.indented ? 2 : 0;
}

/**
 * Writes a JSON document in chunks (never as one string) of UTF-8 bytes, on one line unless
 * `--indented`, control characters escaped.
 */
function writeDocument(doc: unknown, opts: CliOptions, write: Sink): void {
  writeJsonBytes(doc, write, { indent: jsonIndent(opts), transform: escapedJsonChunk, written: write.written });
  write('\n');
}

/** The report pages' view of the results: each file with its analysis and findings. */
function reportFiles(results: FileResult[]): ReportFile[] {
  return results.map((r) => ({ path: r.path, analysis: r.analysis, diagnostics: toJsonDiagnostics(r) }));
}

/**
 * Where the CLI's output goes: text, or a JSON document's UTF-8 bytes. `written`, when there, says whether
 * every chunk handed over is out, so a JSON document's next chunk may reuse the last one's buffer.
 */
type Sink = ((chunk: string | Uint8Array) => void) & { written?: () => boolean };

/**
 * The standard output. Into a file (or a pipe the CLI's entry makes blocking, cli-main.ts) a chunk is out
 * when `write` returns; one queued for a reader that has not taken it yet is held until then.
 */
const standardOutput: Sink = Object.assign((chunk: string | Uint8Array) => void process.stdout.write(chunk), {
  written: () => process.stdout.writableLength === 0,
});

/** Writes `text` to `file` (`-o`) or the standard output; false after saying why a file could not be written. */
function writeOut(file: string | undefined, text: string | Uint8Array, write: Sink): boolean {
  if (file === undefined || file === '-') {
    write(text);
    return true;
  }
  try {
    fs.writeFileSync(file, text);
    return true;
  } catch (e) {
    process.stderr.write(`qpoint: cannot write '${escapeControls(file)}': ${escapeControls(e instanceof Error ? e.message : String(e))}\n`);
    return false;
  }
}

/** `qpoint sweep FILE --output DEVICE`: the output characteristic as CSV (volts, amperes) or a standalone SVG. */
function sweepCommand(opts: CliOptions, r: FileResult, write: Sink): number {
  if (!r.analysis) {
    process.stderr.write(escapeControls(toJsonDiagnostics(r).map((d) => `qpoint: ${d.message}`).join('\n')) + '\n');
    return EXIT.failed;
  }
  const result = outputCharacteristic(r.analysis, opts.device!, opts.points);
  if ('error' in result) {
    process.stderr.write(`qpoint: ${escapeControls(result.error)}\n`);
    return EXIT.usage;
  }
  let text: string;
  if (opts.format === 'svg') {
    // A standalone SVG carries its own styles (light, or dark when the viewer prefers it).
    const svg = renderOutputCharacteristicSvg(result, { width: 720, height: 420 });
    const styled = svg.replace(/^(<svg [^>]*>)/, `$1\n<style>${OUTPUT_CHARACTERISTIC_CSS.replace(/\bbody\b/g, 'svg')}\n.qp-chart { background: var(--qp-bg); }</style>\n<rect width="100%" height="100%" fill="var(--qp-bg, #ffffff)"/>`);
    text = `<?xml version="1.0" encoding="UTF-8"?>\n${styled}\n`;
  } else {
    // RFC 4180 CSV: a header line, then one record per converged sweep point, CRLF line breaks.
    const lines = [`output_node_V,output_current_A`];
    for (const p of result.points) lines.push(`${p.v},${p.i}`);
    text = lines.join('\r\n') + '\r\n';
  }
  return writeOut(opts.outFile, text, write) ? EXIT.clean : EXIT.failed;
}

/** Runs the CLI; returns the exit code (see EXIT). */
/**
 * Runs the CLI; gives the exit code (see EXIT), or a promise of it when the files run on worker
 * threads (`--workers`, several files): one file, or `--workers 1`, runs in this thread at once.
 */
export function main(argv: string[], write: Sink = standardOutput): number | Promise<number> {
  let opts: ReturnType<typeof parseArgs>;
  try {
    opts = parseArgs(argv);
  } catch (e) {
    if (e instanceof UsageError) {
      process.stderr.write(`qpoint: ${e.message}\n\n${USAGE}\n`);
      return EXIT.usage;
    }
    throw e;
  }
  if (opts === 'help') {
    write(USAGE + '\n');
    return EXIT.clean;
  }
  if (opts === 'version') {
    write(VERSION + '\n');
    return EXIT.clean;
  }
  if (opts.command === 'sweep') {
    const r = analyseOne(opts, runWorkspace(opts), opts.files[0]!);
    if (r.internalError) printInternalError(r.path, r.internalError);
    return sweepCommand(opts, r, write);
  }
  const workers = workerCount(opts);
  const finish = writeRun.bind(undefined, opts as CliOptions, write);
  return workers <= 1 ? finish(outcomesInProcess(opts)) : outcomesInWorkers(opts, workers).then(finish);
}

function printInternalError(file: string, error: string): void {
  process.stderr.write(`qpoint: internal error in ${escapeControls(file)}:\n${escapeControls(error).replace(/\\n/g, '\n')}\n`);
}

/** Writes a run's output from its files' outcomes, in the files' order, and gives the exit code. */
function writeRun(opts: CliOptions, write: Sink, outcomes: FileOutcome[]): number {
  for (const o of outcomes) if (o.internalError) printInternalError(o.path, o.internalError);
  const failed = outcomes.some((o) => o.failed);
  const failing = outcomes.some((o) => o.failing);
  const texts = outcomes.map((o) => o.text ?? '');
  if (opts.command === 'report') {
    let text: string;
    // The same document as `check --format json` (it carries the caution too); the exit code stays the report's.
    if (opts.format === 'json') {
      const doc = jsonDocument(outcomes.map(jsonOf));
      // The JSON document is written in chunks, to the file of -o when there is one.
      if (opts.outFile === undefined || opts.outFile === '-') writeDocument(doc, opts, write);
      else {
        const chunks: Uint8Array[] = [];
        writeDocument(doc, opts, (chunk) => chunks.push(typeof chunk === 'string' ? Buffer.from(chunk, 'utf8') : chunk));
        if (!writeOut(opts.outFile, Buffer.concat(chunks), write)) return EXIT.failed;
      }
      return failed ? EXIT.failed : EXIT.clean;
    }
    if (opts.format === 'html') text = htmlPage(outcomes.map((o) => o.path), texts, CAUTION, `qpoint ${VERSION}`);
    else if (opts.format === 'markdown') text = escapeControls(markdownPage(texts, CAUTION)).replace(/\\n/g, '\n');
    else text = texts.join('\n\n') + `\n\n${CAUTION}\n`;
    if (!writeOut(opts.outFile, text, write)) return EXIT.failed;
    return failed ? EXIT.failed : EXIT.clean;
  }
  if (opts.format === 'json') writeDocument(jsonDocument(outcomes.map(jsonOf)), opts, write);
  else if (opts.format === 'sarif') writeDocument(sarifDocument(outcomes.map((o) => o.sarif!)), opts, write);
  else {
    const lines = texts.filter((t) => t !== '');
    write(lines.length ? lines.join('\n') + '\n' : '');
  }
  return failed ? EXIT.failed : failing ? EXIT.findings : EXIT.clean;
}

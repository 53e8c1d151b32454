// Large-array benchmark: `check --format json` on NPN sink arrays of 2k, 20k and 100k elements, against a data-oriented reference loop over the same device equations, measured in one run.
//
// Run (a script that prints figures, not a test):
//   npm run bench:arrays
// Environment:
//   QPOINT_ARRAY_BENCH_SIZES  comma-separated element counts (default "2000,20000,100000"; 4 elements a cell)
//   QPOINT_ARRAY_BENCH_SIZING elements of the sizing case (default 40000, with 1,000 missed targets; 0 skips it)
//
// Every figure is process CPU time (user + system) of a child process that does one thing, and
// its peak resident memory, so sizes do not share a heap. Every child is started with the V8 flags
// the bin uses for a file of that size (server/src/cli-launch.ts), so the engine and the references
// are timed under the same collector settings as the CLI. What is measured for each size:
//   cli        the CLI in-process as `qpoint check --format json FILE` writes it (corners on), output
//              counted and dropped (the bin's first process, which only starts the one measured
//              here, is not counted: about 0.05 s);
//   cli-nc     the same with --no-corners;
//   engine     the nominal solve and the corner phase alone (DcSolver + solve + addCorners) on an
//              already elaborated circuit;
//   sizing     (one case) the resistor-value fixes of 1,000 missed `expect` targets on a 40k-element
//              array, what `check` computes for every target-missed finding;
//   reference  the reference loop below: the same nominal point and the same 26 corners, warm-started
//              from the nominal, with the same device equations, written as plain loops over typed arrays.
// The ratios printed (engine ÷ reference, growth from the smallest size) are measured in the same run,
// so the machine's load affects both sides alike. The load average is printed before and after.
//
// The reference loop: every cell is a reference resistor RR from VCC into a diode-connected NPN QR,
// whose base drives an output NPN QO with a load RL from VCC. The BJT equations are those of
// docs/DEVICE-MODELS.md with IS, BF and VAF given and every other parameter at its default
// (IKF = IKR = VAR = ∞, ISE = ISC = 0): IC = (IBE1 − IBC1)·(1 − VBC/VAF) − IBC1/BR,
// IB = IBE1/BF + IBC1/BR, IBE1 = IS·(exp(VBE/VT) − 1), IBC1 = IS·(exp(VBC/VT) − 1), with the 1 pS
// junction conductance the solver adds across each junction; IS(T) = IS·(T/Tnom)^3·exp(EG/VT'·…)
// with EG = 1.11 eV. With VCC fixed by its source, the two unknowns of a cell (its reference and
// output node) couple to no other cell, so Newton's 2 × 2 block per cell is the whole linear
// algebra; junction steps are limited as the solver limits them (the logarithmic junction limit of
// L. W. Nagel, "SPICE2", UC Berkeley ERL M520, 1975).

import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../server/src/cli';
import { relaunchFlags, thisMachine } from '../../server/src/cli-launch';
import { addCorners, analyseSession } from '../../shared-analysis/src/service';
import { sizingFixes, sizingRequest } from '../../shared-analysis/src/fixes/index';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import { setColumnsUncounted } from '../../shared-analysis/src/columns';
import { SparseLU } from '../../shared-analysis/src/solve/sparse-lu';
import { MemoryWorkspace, type Finding } from '../../shared-analysis/src/types';
import { BF, IS, VAF, VCC, rl, rr, sinkArray } from './sink-array';

const BR = 1;
const GMIN = 1e-12;
const K_OVER_Q = 1.380649e-23 / 1.602176634e-19;
const EG = 1.11;


function cpuMs(): number {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
}

/** The corners the analysis solves for this circuit: supply × temperature × beta without the nominal point. */
function corners(): { supply: number; tC: number; beta: number }[] {
  const out: { supply: number; tC: number; beta: number }[] = [];
  for (const supply of [0.95, 1, 1.05]) for (const tC of [-40, 27, 125]) for (const beta of [0.5, 1, 2]) if (!(supply === 1 && tC === 27 && beta === 1)) out.push({ supply, tC, beta });
  return out;
}

/** Newton on every cell at once; x holds V(r) and V(o) of each cell (warm start in, solution out). Returns iterations. */
function referenceSolve(cells: number, x: Float64Array, cond: { supply: number; tC: number; beta: number }): number {
  const T = cond.tC + 273.15;
  const Tn = 27 + 273.15;
  const vt = K_OVER_Q * T;
  const is = IS * Math.pow(T / Tn, 3) * Math.exp((EG / (K_OVER_Q * Tn) - EG / vt) * 1);
  const bf = BF * cond.beta;
  const br = BR * cond.beta;
  const vcc = VCC * cond.supply;
  const vcrit = vt * Math.log(vt / (Math.SQRT2 * is));
  const limit = (vnew: number, vold: number): number => {
    if (vnew > vcrit && Math.abs(vnew - vold) > 2 * vt) {
      if (vold > 0) {
        const arg = 1 + (vnew - vold) / vt;
        return arg > 0 ? vold + vt * Math.log(arg) : vcrit;
      }
      return vt * Math.log(vnew / vt);
    }
    return vnew;
  };
  let it = 0;
  let moving = true;
  const vbeOld = new Float64Array(cells);
  const vbcOld = new Float64Array(cells);
  for (let c = 0; c < cells; c++) {
    vbeOld[c] = x[2 * c];
    vbcOld[c] = x[2 * c] - x[2 * c + 1];
  }
  while (moving && it < 150) {
    it++;
    moving = false;
    for (let c = 0; c < cells; c++) {
      const vr = x[2 * c];
      const vo = x[2 * c + 1];
      const gr = 1 / rr(c);
      const gl = 1 / rl(c);
      // The limited junction voltages: VBE of both devices (they share it), VBC of the output device.
      const vbe = limit(vr, vbeOld[c]);
      const vbc = limit(vr - vo, vbcOld[c]);
      const limited = vbe !== vr || vbc !== vr - vo;
      vbeOld[c] = vbe;
      vbcOld[c] = vbc;
      const ebe = Math.exp(vbe / vt);
      const ibe = is * (ebe - 1);
      const gbe = (is * ebe) / vt;
      const ebc = Math.exp(vbc / vt);
      const ibc = is * (ebc - 1);
      const gbc = (is * ebc) / vt;
      // QR (collector on its base, VBC = 0): collector plus base current into node r.
      const iR = ibe * (1 + 1 / bf) + GMIN * vbe;
      const dR = gbe * (1 + 1 / bf) + GMIN;
      // QO: base current into node r, collector current into node o, and their slopes by VBE and VBC.
      const early = 1 - vbc / VAF;
      const ibO = ibe / bf + ibc / br + GMIN * vbe + GMIN * vbc;
      const icO = (ibe - ibc) * early - ibc / br - GMIN * vbc;
      const bBe = gbe / bf + GMIN;
      const bBc = gbc / br + GMIN;
      const cBe = gbe * early;
      const cBc = -gbc * early - (ibe - ibc) / VAF - gbc / br - GMIN;
      // The linearised KCL at r and o in u = V(r) = VBE and w = V(r) − V(o) = VBC:
      //   (VCC − u)·gr = iR + dR·(u − vbe) + ibO + bBe·(u − vbe) + bBc·(w − vbc)
      //   (VCC − u + w)·gl = icO + cBe·(u − vbe) + cBc·(w − vbc)
      const a11 = gr + dR + bBe;
      const a12 = bBc;
      const b1 = vcc * gr - iR + dR * vbe - ibO + bBe * vbe + bBc * vbc;
      const a21 = gl + cBe;
      const a22 = cBc - gl;
      const b2 = vcc * gl - icO + cBe * vbe + cBc * vbc;
      const det = a11 * a22 - a12 * a21;
      const u = (b1 * a22 - a12 * b2) / det;
      const w = (a11 * b2 - a21 * b1) / det;
      const nr = u;
      const no = u - w;
      if (limited || Math.abs(nr - vr) > 1e-9 + 1e-9 * Math.abs(nr) || Math.abs(no - vo) > 1e-9 + 1e-9 * Math.abs(no)) moving = true;
      x[2 * c] = nr;
      x[2 * c + 1] = no;
    }
  }
  return it;
}

function reference(elements: number): { ms: number; iterations: number; check: number[] } {
  const cells = elements / 4;
  const t0 = cpuMs();
  const nominal = new Float64Array(2 * cells);
  let iterations = referenceSolve(cells, nominal, { supply: 1, tC: 27, beta: 1 });
  const x = new Float64Array(2 * cells);
  let check: number[] = [];
  for (const c of corners()) {
    x.set(nominal);
    iterations += referenceSolve(cells, x, c);
    if (c.supply === 1.05 && c.tC === 125 && c.beta === 2) check = [x[0], x[1]];
  }
  return { ms: cpuMs() - t0, iterations, check: [nominal[0], nominal[1], ...check] };
}

/**
 * The second reference: the whole circuit as one MNA system (the supply node, every cell's two nodes
 * and the source's branch current), factored by the project's own sparse LU (`SparseLU`: ordering
 * and symbolic analysis once, a numeric refactorisation every Newton iteration), with the device
 * state in typed arrays and each stamp's matrix slot worked out once. Same device equations,
 * limiting, convergence test and warm-started corners as the block reference; what it adds is the
 * general linear algebra a solver of any netlist needs, and none of the engine's generality (no
 * device tables per kind, no equilibration, no gmin or source stepping, no operating-point record).
 */
function referenceMnaSolver(cells: number): (x: Float64Array, cond: { supply: number; tC: number; beta: number }) => number {
  // Unknowns: 0 = vcc, 1 + 2c = r of cell c, 2 + 2c = o of cell c, n − 1 = the source's branch current.
  const n = 2 * cells + 2;
  const branch = n - 1;
  const rows: number[] = [];
  const cols: number[] = [];
  const slotOf = new Map<number, number>();
  const slot = (r: number, c: number): number => {
    const key = r * n + c;
    let k = slotOf.get(key);
    if (k === undefined) {
      k = rows.length;
      slotOf.set(key, k);
      rows.push(r);
      cols.push(c);
    }
    return k;
  };
  // Resistors and the source: constant entries, stamped once into `linear`.
  const linearSlots: number[] = [];
  const linearValues: number[] = [];
  const stamp = (r: number, c: number, g: number) => {
    linearSlots.push(slot(r, c));
    linearValues.push(g);
  };
  for (let c = 0; c < cells; c++) {
    const r = 1 + 2 * c;
    const o = 2 + 2 * c;
    for (const [a, g] of [[r, 1 / rr(c)], [o, 1 / rl(c)]] as const) {
      stamp(0, 0, g);
      stamp(a, a, g);
      stamp(0, a, -g);
      stamp(a, 0, -g);
    }
  }
  stamp(0, branch, 1);
  stamp(branch, 0, 1);
  // BJTs (emitter on ground): collector and base unknowns, and the slots of the collector and base rows.
  const devices = 2 * cells;
  const col = new Int32Array(devices);
  const base = new Int32Array(devices);
  const sCB = new Int32Array(devices);
  const sCC = new Int32Array(devices);
  const sBB = new Int32Array(devices);
  const sBC = new Int32Array(devices);
  for (let c = 0; c < cells; c++) {
    const r = 1 + 2 * c;
    const o = 2 + 2 * c;
    // QR: collector and base on r (diode-connected). QO: collector on o, base on r.
    col[2 * c] = r;
    base[2 * c] = r;
    col[2 * c + 1] = o;
    base[2 * c + 1] = r;
  }
  for (let d = 0; d < devices; d++) {
    sCB[d] = slot(col[d], base[d]);
    sCC[d] = slot(col[d], col[d]);
    sBB[d] = slot(base[d], base[d]);
    sBC[d] = slot(base[d], col[d]);
  }
  const lu = new SparseLU({ n, rows: Int32Array.from(rows), cols: Int32Array.from(cols) });
  const linear = new Float64Array(rows.length);
  for (let k = 0; k < linearSlots.length; k++) linear[linearSlots[k]] += linearValues[k];
  const values = new Float64Array(rows.length);
  const rhs = new Float64Array(n);
  const next = new Float64Array(n);
  const vbeOld = new Float64Array(devices);
  const vbcOld = new Float64Array(devices);

  return (x, cond) => {
    const T = cond.tC + 273.15;
    const Tn = 27 + 273.15;
    const vt = K_OVER_Q * T;
    const is = IS * Math.pow(T / Tn, 3) * Math.exp((EG / (K_OVER_Q * Tn) - EG / vt) * 1);
    const bf = BF * cond.beta;
    const br = BR * cond.beta;
    const vcrit = vt * Math.log(vt / (Math.SQRT2 * is));
    for (let d = 0; d < devices; d++) {
      vbeOld[d] = x[base[d]];
      vbcOld[d] = x[base[d]] - x[col[d]];
    }
    let it = 0;
    let moving = true;
    while (moving && it < 150) {
      it++;
      values.set(linear);
      rhs.fill(0);
      rhs[branch] = VCC * cond.supply;
      const limited = stampBjts(devices, x, col, base, sCB, sCC, sBB, sBC, vbeOld, vbcOld, values, rhs, vt, is, bf, br, vcrit);
      const f = lu.factor(values);
      if (!f.ok) throw new Error(`reference MNA: singular at ${f.singularIndex}`);
      lu.solve(rhs, next);
      moving = limited;
      for (let k = 0; k < n; k++) {
        if (k !== branch && Math.abs(next[k] - x[k]) > 1e-9 + 1e-9 * Math.abs(next[k])) moving = true;
        x[k] = next[k];
      }
    }
    return it;
  };
}

/** One Newton iteration's BJT stamps (emitters on ground) into `values` and `rhs`; true when a junction was limited. */
function stampBjts(
  devices: number, x: Float64Array, col: Int32Array, base: Int32Array, sCB: Int32Array, sCC: Int32Array, sBB: Int32Array, sBC: Int32Array,
  vbeOld: Float64Array, vbcOld: Float64Array, values: Float64Array, rhs: Float64Array, vt: number, is: number, bf: number, br: number, vcrit: number,
): boolean {
  let limited = false;
  for (let d = 0; d < devices; d++) {
    const vb = x[base[d]];
    const vc = x[col[d]];
    let vbe = vb;
    let vbc = vb - vc;
    // The logarithmic junction limit, as in the block reference.
    if (vbe > vcrit && Math.abs(vbe - vbeOld[d]) > 2 * vt) {
      const vold = vbeOld[d];
      if (vold > 0) {
        const arg = 1 + (vbe - vold) / vt;
        vbe = arg > 0 ? vold + vt * Math.log(arg) : vcrit;
      } else vbe = vt * Math.log(vbe / vt);
      limited = true;
    }
    if (vbc > vcrit && Math.abs(vbc - vbcOld[d]) > 2 * vt) {
      const vold = vbcOld[d];
      if (vold > 0) {
        const arg = 1 + (vbc - vold) / vt;
        vbc = arg > 0 ? vold + vt * Math.log(arg) : vcrit;
      } else vbc = vt * Math.log(vbc / vt);
      limited = true;
    }
    vbeOld[d] = vbe;
    vbcOld[d] = vbc;
    const ebe = Math.exp(vbe / vt);
    const ibe = is * (ebe - 1);
    const gbe = (is * ebe) / vt;
    const ebc = Math.exp(vbc / vt);
    const ibc = is * (ebc - 1);
    const gbc = (is * ebc) / vt;
    const early = 1 - vbc / VAF;
    const ic = (ibe - ibc) * early - ibc / br - GMIN * vbc;
    const ib = ibe / bf + ibc / br + GMIN * vbe + GMIN * vbc;
    const cBe = gbe * early;
    const cBc = -gbc * early - (ibe - ibc) / VAF - gbc / br - GMIN;
    const bBe = gbe / bf + GMIN;
    const bBc = gbc / br + GMIN;
    // VBE = V(b), VBC = V(b) − V(c): d/dV(b) = d/dVBE + d/dVBC, d/dV(c) = −d/dVBC.
    values[sCB[d]] += cBe + cBc;
    values[sCC[d]] -= cBc;
    values[sBB[d]] += bBe + bBc;
    values[sBC[d]] -= bBc;
    rhs[col[d]] -= ic - cBe * vbe - cBc * vbc;
    rhs[base[d]] -= ib - bBe * vbe - bBc * vbc;
  }
  return limited;
}

function referenceMna(elements: number): { ms: number; iterations: number; check: number[] } {
  const cells = elements / 4;
  const t0 = cpuMs();
  const solve = referenceMnaSolver(cells);
  const nominal = new Float64Array(2 * cells + 2);
  let iterations = solve(nominal, { supply: 1, tC: 27, beta: 1 });
  const x = new Float64Array(nominal.length);
  let check: number[] = [];
  for (const c of corners()) {
    x.set(nominal);
    iterations += solve(x, c);
    if (c.supply === 1.05 && c.tC === 125 && c.beta === 2) check = [x[1], x[2]];
  }
  return { ms: cpuMs() - t0, iterations, check: [nominal[1], nominal[2], ...check] };
}

function child(args: string[]): void {
  const [what, file] = args;
  const text = readFileSync(file, 'utf8');
  const elements = Number(args[2]);
  let out: Record<string, unknown> = {};
  // As the bin's process started for the netlist's size does (server/src/cli-main.ts): large columns outside V8's
  // count, in every child that runs the engine, so the engine child's figure is taken as the CLI's is.
  if (relaunchFlags(statSync(file).size, false, thisMachine())) setColumnsUncounted(true);
  if (what === 'cli' || what === 'cli-nc') {
    let bytes = 0;
    const t0 = cpuMs();
    main(['check', '--format', 'json', ...(what === 'cli-nc' ? ['--no-corners'] : []), file], (s) => {
      bytes += s.length;
    });
    out = { ms: cpuMs() - t0, bytes };
  } else if (what === 'engine') {
    // The spread analysis (adjoint sensitivities) is left out: addCorners would add it, and neither reference does it.
    const session = analyseSession({ uri: file, text }, new MemoryWorkspace({ [file]: text }), { corners: { enabled: false }, variation: { enabled: false } });
    const circuit = session.analysis.circuit!;
    const t0 = cpuMs();
    const solver = new DcSolver(circuit);
    const nominal = solver.solve();
    addCorners(session.analysis, { solver, nominal });
    const ms = cpuMs() - t0;
    const s = session.analysis.structures[0];
    const hot = s.corners.find((c) => c.label === 'supply +5 %, 125 °C, beta ×2');
    out = { ms, check: [nominal.op.nodes['r0'], nominal.op.nodes['o0'], hot ? s.corners.length : 0] };
    // The same corner's node voltages, re-solved, for the comparison with the reference loop.
    const r = solver.solve({ temperatureC: 125, betaScale: 2, sourceValues: { VCC: VCC * 1.05 }, initialGuess: nominal.x });
    (out.check as number[]).push(r.op.nodes['r0'], r.op.nodes['o0']);
  } else if (what === 'sizing') {
    // Every target missed: sizing offers standard values for each, re-solving its block.
    // The findings are capped at 50 per code, so the other targets' requests are made here the same
    // way (the cell's reference resistor for its output device), as an editor asks for each one.
    const session = analyseSession({ uri: file, text }, new MemoryWorkspace({ [file]: text }), { corners: { enabled: false } });
    const a = session.analysis;
    const shown = a.findings.find((f) => f.code === 'target-missed' && sizingRequest(f));
    if (!shown) throw new Error('no target-missed finding with a sizing request');
    const marker = shown.data!['sizing'] as Record<string, unknown>;
    const requests: Finding[] = [];
    const targets = text.split('\n').filter((l) => l.includes('; expect')).map((l) => Number(/^QO(\d+)/.exec(l)![1]));
    for (const i of targets) {
      const structure = a.structures.find((s) => s.outputs.some((o) => o.device === `QO${i}`));
      requests.push({ ...shown, data: { ...shown.data, sizing: { ...marker, resistor: `RR${i}`, device: `QO${i}`, structureId: structure?.id } } });
    }
    const ctx = { circuit: a.circuit!, solver: session.solver!, structures: a.structures, documents: a.documents, options: a.options, point: a.operatingPoint };
    const t0 = cpuMs();
    let fixed = 0;
    for (const f of requests) if (sizingFixes(f, ctx).length > 0) fixed++;
    const ms = cpuMs() - t0;
    out = { ms, missed: requests.length, fixed };
  } else if (what === 'reference') {
    out = reference(elements);
  } else if (what === 'reference-lu') {
    out = referenceMna(elements);
  }
  out.maxRssMB = process.resourceUsage().maxRSS / 1024;
  process.stderr.write(`@@${JSON.stringify(out)}\n`);
}

function runChild(what: string, file: string, elements: number): Record<string, number & unknown> & { ms: number; maxRssMB: number } {
  // Every child runs under the V8 flags the `qpoint` bin starts a run of this size with (server/src/cli-launch.ts), the
  // engine's and the references' as the CLI's: under V8's defaults the engine child's timed part held a full
  // collection or not as the heap the parse left before it happened to fall, which moved its ratio to the references
  // by a fifth between builds whose solver was the same (docs/PERFORMANCE.md).
  const flags = relaunchFlags(statSync(file).size, false, thisMachine()) ?? [];
  const r = spawnSync(process.execPath, [...flags, __filename, '--child', what, file, String(elements)], { encoding: 'utf8', maxBuffer: 1 << 26 });
  const line = (r.stderr ?? '').split('\n').find((l) => l.startsWith('@@'));
  if (!line) throw new Error(`${what} on ${elements} elements failed: ${r.stderr}`);
  return JSON.parse(line.slice(2));
}

const fmt = (ms: number) => (ms >= 1000 ? `${(ms / 1000).toFixed(2)} s` : `${ms.toFixed(0)} ms`);

function bench(): void {
  const sizes = (process.env.QPOINT_ARRAY_BENCH_SIZES ?? '2000,20000,100000').split(',').map(Number);
  const dir = mkdtempSync(join(tmpdir(), 'qpoint-array-bench-'));
  console.log(`load average before: ${loadavg().map((x) => x.toFixed(2)).join(' ')}; node ${process.version}`);
  console.log(
    'elements | cli (corners) | peak RSS | JSON | cli --no-corners | engine solve+corners | MNA + sparse LU reference | engine ÷ MNA reference | 2×2 block floor | engine ÷ block floor | nominal V(o0) engine / MNA / block | hot corner V(o0) engine / MNA / block',
  );
  const rows: { elements: number; cli: number; engine: number }[] = [];
  for (const n of sizes) {
    const file = join(dir, `sink${n}.cir`);
    writeFileSync(file, sinkArray(n));
    const cli = runChild('cli', file, n);
    const nc = runChild('cli-nc', file, n);
    const engine = runChild('engine', file, n) as unknown as { ms: number; check: number[] };
    const ref = runChild('reference', file, n) as unknown as { ms: number; check: number[]; iterations: number };
    const mna = runChild('reference-lu', file, n) as unknown as { ms: number; check: number[]; iterations: number };
    rows.push({ elements: n, cli: cli.ms, engine: engine.ms });
    console.log(
      [
        n.toLocaleString('en'),
        fmt(cli.ms),
        `${cli.maxRssMB.toFixed(0)} MB`,
        `${(Number(cli.bytes) / 1e6).toFixed(1)} MB`,
        fmt(nc.ms),
        fmt(engine.ms),
        fmt(mna.ms),
        `${(engine.ms / mna.ms).toFixed(2)}×`,
        fmt(ref.ms),
        `${(engine.ms / ref.ms).toFixed(2)}×`,
        `${engine.check[1].toFixed(9)} / ${mna.check[1].toFixed(9)} / ${ref.check[1].toFixed(9)}`,
        `${engine.check[4].toFixed(9)} / ${mna.check[3].toFixed(9)} / ${ref.check[3].toFixed(9)}`,
      ].join(' | '),
    );
  }
  const sizingElements = Number(process.env.QPOINT_ARRAY_BENCH_SIZING ?? 40000);
  if (sizingElements > 0) {
    const file = join(dir, `targets${sizingElements}.cir`);
    writeFileSync(file, sinkArray(sizingElements, Math.min(1000, sizingElements / 4)));
    const sz = runChild('sizing', file, sizingElements) as unknown as { ms: number; missed: number; fixed: number };
    console.log(`sizing: ${sz.missed} missed targets on ${sizingElements.toLocaleString('en')} elements : ${fmt(sz.ms)} CPU, ${sz.fixed} findings with a fix, ${(sz.ms / Math.max(1, sz.missed)).toFixed(1)} ms a target`);
  }
  if (rows.length > 1) {
    const a = rows[0];
    for (const b of rows.slice(1)) {
      console.log(`growth ${a.elements} → ${b.elements} elements (${(b.elements / a.elements).toFixed(0)}×): cli ${(b.cli / a.cli).toFixed(1)}×, engine ${(b.engine / a.engine).toFixed(1)}×`);
    }
  }
  console.log(`load average after: ${loadavg().map((x) => x.toFixed(2)).join(' ')}`);
}

const at = process.argv.indexOf('--child');
if (at >= 0) child(process.argv.slice(at + 1));
else bench();

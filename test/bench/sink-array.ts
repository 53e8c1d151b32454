// The NPN sink array the large-array benchmarks run on (array-bench.ts, floor-bench.ts): per cell a reference
// resistor RR from VCC into a diode-connected NPN QR, whose base drives an output NPN QO with a load RL from VCC.
// Invented values, varied with the index.

export const IS = 1e-15;
export const BF = 120;
export const VAF = 80;
export const VCC = 5;

/** The sink array of `elements` elements (4 a cell): invented values, varied with the index. */
export function sinkArray(elements: number, targets = 0): string {
  const L = [`NPN sink array, ${elements} elements`, `VCC vcc 0 DC ${VCC}`, `.model QN NPN (IS=${IS} BF=${BF} VAF=${VAF})`];
  const cells = elements / 4;
  const every = targets > 0 ? Math.floor(cells / targets) : 0;
  for (let i = 0; i < cells; i++) {
    // A target of 0.5 mA ±1 %: the cells give 0.26–0.42 mA, so every target is missed.
    const target = every > 0 && i % every === 0 && i / every < targets ? ' ; expect 0.5mA ±1%' : '';
    L.push(`RR${i} vcc r${i} ${rr(i) / 1e3}k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN${target}`, `RL${i} vcc o${i} ${rl(i) / 1e3}k`);
  }
  L.push('.end', '');
  return L.join('\n');
}
export const rr = (i: number) => (10 + (i % 7)) * 1e3;
export const rl = (i: number) => (1 + (i % 3)) * 1e3;

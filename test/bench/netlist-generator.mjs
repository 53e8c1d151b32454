// Generates large bias netlists for the server benchmark: NPN mirror cells plus resistive bias ladders on one supply.

/**
 * A flat netlist with `cells` mirror cells of 10 elements each (reference resistor, reference
 * device, three outputs with their loads, a divider) and `ladderResistors` resistors in bias
 * ladders of 50 rungs hanging from the supply. Values vary so no two cells are identical.
 * Returns the text and the number of element lines.
 */
export function biasNetlist({ cells, ladderResistors }) {
  const lines = [`Generated bench netlist: ${cells} mirror cells and ${ladderResistors} ladder resistors on a 12 V supply`, 'VCC vcc 0 DC 12', '.model QB NPN (BF=120 VAF=80)'];
  let elements = 1;
  for (let c = 0; c < cells; c++) {
    lines.push(
      `RREF${c} vcc r${c} ${20 + (c % 17)}k`,
      `QR${c} r${c} r${c} 0 QB`,
      `QA${c} a${c} r${c} 0 QB`,
      `QB${c} b${c} r${c} 0 QB 2`,
      `QC${c} k${c} r${c} 0 QB`,
      `RA${c} vcc a${c} ${4 + (c % 5)}.7k`,
      `RB${c} vcc b${c} 2.2k`,
      `RC${c} vcc k${c} 3.3k`,
      `RD${c} vcc d${c} 10k`,
      `RE${c} d${c} 0 ${5 + (c % 3)}.6k`,
    );
    elements += 10;
  }
  const RUNGS = 50;
  for (let k = 0; k < ladderResistors; k++) {
    const ladder = Math.floor(k / RUNGS);
    const rung = k % RUNGS;
    const top = rung === 0 ? 'vcc' : `l${ladder}_${rung}`;
    const bottom = rung === RUNGS - 1 || k === ladderResistors - 1 ? '0' : `l${ladder}_${rung + 1}`;
    lines.push(`RL${ladder}_${rung} ${top} ${bottom} ${1 + ((k * 7) % 90) / 10}k`);
    elements++;
  }
  lines.push('.end', '');
  return { text: lines.join('\n'), elements };
}

// Invented self-biased cells shared by the tests that need a circuit with a second, zero-current state.

/** An invented ΔVBE cell (an NPN pair of area ratio 8 over a PNP mirror) with `startup` as its start-up path, or none for ''. */
export const BJT_CELL = (startup: string) => `an invented ΔVBE cell
.model qn npn (bf=100)
.model qp pnp (bf=50)
VCC vcc 0 5
Q1 n1 n1 0 qn
Q2 p n1 x qn area=8
R x 0 1k
QP1 p p vcc qp
QP2 n1 p vcc qp
${startup}
.end
`;

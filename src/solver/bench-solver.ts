/**
 * Benchmark of the engine's own cost per residual row per iteration
 * (run: `npx tsc -p tsconfig.json --outDir /tmp/rigsolve-bench && node /tmp/rigsolve-bench/solver/bench-solver.js`).
 * Shape of the rig problem: 4000 residual blocks x 140 residuals, 6-dim inner
 * Jacobian, each block touching one kept 6-dim block ("camera", 8 of them)
 * and one eliminated 6-dim block ("frame", 500 of them), mapped with M = I.
 * The residual itself is linear in q = x_cam + x_frame with a fixed random
 * 140 x 6 matrix, so evaluate() is cheap and timed separately.
 * With BENCH_INTRINSICS=k (e.g. 9) every camera also gets a kept k-dim
 * intrinsics block and the inner Jacobian grows to 6 + k columns
 * (M_ext = M_frame = [I6; 0], M_intr = [0; Ik]).
 */
import { Problem } from './problem-builder.js';
import { NormalEquations } from './schur.js';
import { solve } from './lm.js';
import { huberLoss } from './loss.js';
import type { ResidualBlock } from './problem.js';
import { gaussian, rng } from '../util/random.js';

const NUM_CAM = 8;
const NUM_FRAME = 500;
const ROWS = 140;
const NI = Number(process.env['BENCH_INTRINSICS'] ?? 0);
const P = 6 + NI;
const u = rng(5);
const problem = new Problem();
const cams = Array.from({ length: NUM_CAM }, (_, j) =>
  problem.addParameterBlock({ values: Float64Array.from({ length: 6 }, () => 0.1 * gaussian(u)), constant: j === 0, label: `cam${j}` }),
);
const intr = Array.from({ length: NI > 0 ? NUM_CAM : 0 }, (_, j) =>
  problem.addParameterBlock({ values: Float64Array.from({ length: NI }, () => 0.1 * gaussian(u)), label: `intr${j}` }),
);
const frames = Array.from({ length: NUM_FRAME }, (_, i) =>
  problem.addParameterBlock({ values: Float64Array.from({ length: 6 }, () => 0.1 * gaussian(u)), eliminate: true, label: `frame${i}` }),
);
const loss = huberLoss(1);
function makeBlock(c: number, f: number): ResidualBlock {
  const Jf = Float64Array.from({ length: ROWS * P }, () => gaussian(u));
  const y = Float64Array.from({ length: ROWS }, () => gaussian(u));
  const q = new Float64Array(P);
  return {
    numResiduals: ROWS,
    parameterBlocks: NI > 0 ? [cams[c]!, frames[f]!, intr[c]!] : [cams[c]!, frames[f]!],
    innerSize: P,
    mapped: true,
    loss,
    lossGroupSize: 2,
    evaluate(params, r, J, maps) {
      const a = params[0]!;
      const b = params[1]!;
      for (let k = 0; k < 6; k++) q[k] = a[k]! + b[k]!;
      for (let k = 0; k < NI; k++) q[6 + k] = params[2]![k]!;
      for (let i = 0; i < ROWS; i++) {
        let s = -y[i]!;
        for (let k = 0; k < P; k++) s += Jf[i * P + k]! * q[k]!;
        r[i] = s;
      }
      if (J) J.set(Jf);
      if (maps) {
        for (let m = 0; m < maps.length; m++) {
          const M = maps[m]!;
          M.fill(0);
          if (m < 2) for (let k = 0; k < 6; k++) M[k * 6 + k] = 1;
          else for (let k = 0; k < NI; k++) M[(6 + k) * NI + k] = 1;
        }
      }
      return true;
    },
  };
}
let n = 0;
for (let f = 0; f < NUM_FRAME; f++) for (let c = 0; c < NUM_CAM; c++) {
  problem.addResidualBlock(makeBlock(c, f));
  n++;
}
const rowsTotal = n * ROWS;
const ne = new NormalEquations(problem);
const D = new Float64Array(problem.layout().numTangent).fill(1);
const delta = new Float64Array(problem.layout().numTangent);
// Warm-up.
for (let k = 0; k < 3; k++) {
  ne.linearize();
  ne.solve(1e-3, D, delta);
  ne.evaluateCost();
}
const reps = 10;
const time = (f: () => void) => {
  const t = performance.now();
  for (let k = 0; k < reps; k++) f();
  return (performance.now() - t) / reps / 1000;
};
const J = new Float64Array(ROWS * P);
const r = new Float64Array(ROWS);
const maps = [new Float64Array(P * 6), new Float64Array(P * 6), new Float64Array(P * Math.max(NI, 1))];
const tEvalJ = time(() => {
  for (let i = 0; i < problem.numResidualBlocks; i++) problem.residualBlock(i).evaluate(problem.residualParams(i), r, J, maps);
});
const tEvalR = time(() => {
  for (let i = 0; i < problem.numResidualBlocks; i++) problem.residualBlock(i).evaluate(problem.residualParams(i), r, null, null);
});
const tLin = time(() => ne.linearize());
const tSolve = time(() => ne.solve(1e-3, D, delta));
const tCost = time(() => ne.evaluateCost());
const ns = (s: number) => ((s * 1e9) / rowsTotal).toFixed(1);
console.log(`inner size ${P}, blocks ${n}, rows ${rowsTotal}, reduced size ${problem.layout().numKept}, eliminated ${NUM_FRAME}`);
console.log(`linearize   ${(tLin * 1e3).toFixed(1)} ms total, of which user evaluate ${(tEvalJ * 1e3).toFixed(1)} ms → engine ${ns(tLin - tEvalJ)} ns/row`);
console.log(`schur solve ${(tSolve * 1e3).toFixed(1)} ms → ${ns(tSolve)} ns/row`);
console.log(`cost eval   ${(tCost * 1e3).toFixed(1)} ms total, user evaluate ${(tEvalR * 1e3).toFixed(1)} ms → engine ${ns(tCost - tEvalR)} ns/row`);
console.log(`engine share per iteration (linearize + solve + trial cost, minus user evaluate): ${ns(tLin - tEvalJ + tSolve + tCost - tEvalR)} ns/row`);
const t0 = performance.now();
const s = solve(problem, { maxIterations: 10 });
console.log(`solve: ${s.termination} (${s.message}), ${s.iterations.length} iterations in ${((performance.now() - t0) / 1000).toFixed(2)} s`);

// Machine calibration: time of one multiply-add in a plain dot product, so the
// figures above can be compared across (loaded) machines.
{
  const x = Float64Array.from({ length: 4096 }, () => u());
  const y = Float64Array.from({ length: 4096 }, () => u());
  let acc = 0;
  const dot = () => {
    for (let k = 0; k < 2000; k++) {
      let s0 = 0;
      for (let i = 0; i < 4096; i++) s0 += x[i]! * y[i]!;
      acc += s0;
    }
  };
  dot();
  const tc = performance.now();
  dot();
  console.log(`calibration: ${(((performance.now() - tc) * 1e6) / (2000 * 4096)).toFixed(2)} ns per multiply-add in a plain dot product (checksum ${acc.toExponential(2)})`);
}

/**
 * A pose stored as 12 numbers (R row-major, then t) with the left update
 * X ⊞ δ = exp(δ)·X of CONVENTIONS.md. It fits the solver's Manifold
 * interface structurally, so geometry/ does not import from solver/.
 */
import { mat3Mul, mat3MulVec } from '../linalg/small.js';
import { so3Exp, so3LeftJacobian } from './so3.js';

const dR = new Float64Array(9);
const V = new Float64Array(9);
const rho = new Float64Array(3);
const Rtmp = new Float64Array(9);
const ttmp = new Float64Array(3);

export const se3LeftManifold = Object.freeze({
  ambientSize: 12,
  tangentSize: 6,
  /** out = exp(δ)·x: R ← exp(ω) R, t ← exp(ω) t + J_l(ω) ρ. out may alias x. */
  plus(x: Float64Array, delta: Float64Array, out: Float64Array): void {
    so3Exp(delta, dR);
    so3LeftJacobian(delta, V);
    rho[0] = delta[3]!;
    rho[1] = delta[4]!;
    rho[2] = delta[5]!;
    mat3Mul(Rtmp, dR, x);
    mat3MulVec(ttmp, dR, x.subarray(9, 12));
    mat3MulVec(rho, V, rho);
    out.set(Rtmp, 0);
    out[9] = ttmp[0]! + rho[0]!;
    out[10] = ttmp[1]! + rho[1]!;
    out[11] = ttmp[2]! + rho[2]!;
  },
});

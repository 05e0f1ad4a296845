import fc from 'fast-check';
import { Euler, Matrix4, Quaternion } from 'three';
import { describe, expect, it } from 'vitest';
import { axisArb } from '../testing/group-laws.js';
import { expectMatrixClose, rng } from '../testing/numeric.js';
import {
  GIMBAL_LOCK_COS_PITCH,
  matrixToQuat,
  matrixToRpy,
  poseFromMatrix4,
  poseToMatrix4,
  quatMul,
  quatNormalize,
  quatToMatrix,
  quatToRotvec,
  rotvecToQuat,
  rpyToMatrix,
} from './rotation.js';
import { compose, type Pose } from './se3.js';
import { so3Exp, so3Log } from './so3.js';

// Reference: the `three` library (three.js, r187). Its Matrix4.set() takes row-major
// arguments but .elements is column-major; its Quaternion is (x, y, z, w); Euler order
// 'ZYX' builds R = Rz(z)·Ry(y)·Rx(x), which is the URDF roll-pitch-yaw convention.
function threeMatrix(R: ArrayLike<number>, t: ArrayLike<number> = [0, 0, 0]): Matrix4 {
  return new Matrix4().set(R[0]!, R[1]!, R[2]!, t[0]!, R[3]!, R[4]!, R[5]!, t[1]!, R[6]!, R[7]!, R[8]!, t[2]!, 0, 0, 0, 1);
}
/** three's column-major 4x4 → our row-major 16. */
function rowMajor(m: Matrix4): Float64Array {
  const e = m.elements;
  const out = new Float64Array(16);
  for (let r = 0; r < 4; r++) for (let c = 0; c < 4; c++) out[r * 4 + c] = e[c * 4 + r]!;
  return out;
}
function rot3(m: Matrix4): Float64Array {
  const a = rowMajor(m);
  return Float64Array.from([a[0]!, a[1]!, a[2]!, a[4]!, a[5]!, a[6]!, a[8]!, a[9]!, a[10]!]);
}
/** three quaternion (x,y,z,w) → wxyz with w ≥ 0. */
function wxyz(q: Quaternion): Float64Array {
  return quatNormalize(Float64Array.from([q.w, q.x, q.y, q.z]));
}

/** Random rotations, plus ones near π about each axis so that every Shepperd branch is taken. */
function sampleRotations(): Float64Array[] {
  const u = rng(42);
  const out: Float64Array[] = [];
  for (let k = 0; k < 200; k++) {
    const ax = [u() * 2 - 1, u() * 2 - 1, u() * 2 - 1];
    const n = Math.hypot(...ax);
    const th = Math.PI * u();
    out.push(so3Exp(ax.map((a) => (a / n) * th)));
  }
  for (const ax of [[1, 0, 0], [0, 1, 0], [0, 0, 1], [0.6, 0.8, 0], [0, 0.6, -0.8]]) {
    for (const th of [Math.PI, Math.PI - 1e-9, Math.PI - 1e-3, 1e-9, 0]) out.push(so3Exp(ax.map((a) => a * th)));
  }
  return out;
}

const rotArb = fc.tuple(axisArb, fc.double({ min: 0, max: Math.PI, noNaN: true })).map(([ax, th]) => so3Exp(ax.map((a) => a * th)));

describe('quaternions against three', () => {
  const rots = sampleRotations();

  it('matrixToQuat matches Quaternion.setFromRotationMatrix (up to sign) and is unit with w ≥ 0', () => {
    for (const R of rots) {
      const q = matrixToQuat(R);
      expect(q[0]!).toBeGreaterThanOrEqual(0);
      expect(Math.abs(Math.hypot(...q) - 1)).toBeLessThan(1e-15);
      const ref = wxyz(new Quaternion().setFromRotationMatrix(threeMatrix(R)));
      // At w = 0 exactly, q and −q both satisfy w ≥ 0: compare the rotations they represent.
      if (Math.abs(q[0]!) < 1e-12) expectMatrixClose(quatToMatrix(q), quatToMatrix(ref), { abs: 1e-12 }, 'R(q) at w = 0');
      else expectMatrixClose(q, ref, { abs: 1e-12 }, 'matrixToQuat');
    }
  });

  it('quatToMatrix matches Matrix4.makeRotationFromQuaternion', () => {
    for (const R of rots) {
      const q = matrixToQuat(R);
      const ref = rot3(new Matrix4().makeRotationFromQuaternion(new Quaternion(q[1]!, q[2]!, q[3]!, q[0]!)));
      expectMatrixClose(quatToMatrix(q), ref, { abs: 1e-14 }, 'quatToMatrix');
      expectMatrixClose(quatToMatrix(q), R, { abs: 1e-14 }, 'quatToMatrix(matrixToQuat(R))');
    }
  });

  it('rotations by π (w = 0) get one stored quaternion: first non-zero of x, y, z positive', () => {
    expectMatrixClose(matrixToQuat([1, 0, 0, 0, -1, 0, 0, 0, -1]), [0, 1, 0, 0], { abs: 1e-16 }, 'π about x');
    expectMatrixClose(quatNormalize(Float64Array.from([0, 0, -0.6, 0.8])), [0, 0, 0.6, -0.8], { abs: 1e-16 }, 'sign');
    expect(() => quatNormalize(new Float64Array(4))).toThrow(RangeError);
  });

  it('quatMul matches Quaternion.multiply and R(a⊗b) = R(a)·R(b)', () => {
    const u = rng(5);
    for (let k = 0; k < 50; k++) {
      const a = quatNormalize(Float64Array.from([u() - 0.5, u() - 0.5, u() - 0.5, u() - 0.5]));
      const b = quatNormalize(Float64Array.from([u() - 0.5, u() - 0.5, u() - 0.5, u() - 0.5]));
      const ref = new Quaternion(a[1]!, a[2]!, a[3]!, a[0]!).multiply(new Quaternion(b[1]!, b[2]!, b[3]!, b[0]!));
      expectMatrixClose(quatMul(a, b), [ref.w, ref.x, ref.y, ref.z], { abs: 1e-15 }, 'quatMul');
    }
  });
});

describe('roll-pitch-yaw against three (Euler order ZYX)', () => {
  const rots = sampleRotations();

  it('matrixToRpy matches Euler.setFromRotationMatrix(…, "ZYX") away from gimbal lock', () => {
    let compared = 0;
    for (const R of rots) {
      const rpy = matrixToRpy(R);
      if (Math.abs(Math.cos(rpy[1]!)) < 1e-3) continue; // three switches branch at |sin| > 0.9999999
      const e = new Euler().setFromRotationMatrix(threeMatrix(R), 'ZYX');
      // Angles are compared modulo 2π (π and −π are the same yaw; we return π).
      const ref = [e.x, e.y, e.z];
      for (let k = 0; k < 3; k++) expect(Math.abs(Math.atan2(Math.sin(rpy[k]! - ref[k]!), Math.cos(rpy[k]! - ref[k]!)))).toBeLessThan(1e-12);
      compared++;
    }
    expect(compared).toBeGreaterThan(150);
  });

  it('rpyToMatrix matches Matrix4.makeRotationFromEuler(new Euler(r, p, y, "ZYX"))', () => {
    fc.assert(
      fc.property(fc.double({ min: -Math.PI, max: Math.PI, noNaN: true }), fc.double({ min: -Math.PI / 2, max: Math.PI / 2, noNaN: true }), fc.double({ min: -Math.PI, max: Math.PI, noNaN: true }), (r, p, y) => {
        const ref = rot3(new Matrix4().makeRotationFromEuler(new Euler(r, p, y, 'ZYX')));
        expectMatrixClose(rpyToMatrix(r, p, y), ref, { abs: 1e-15 }, 'rpyToMatrix');
      }),
      { numRuns: 300 },
    );
  });

  it('rpyToMatrix equals Rz(yaw)·Ry(pitch)·Rx(roll) built from single-axis rotation vectors', () => {
    const [r, p, y] = [0.3, -0.7, 2.1];
    const M = new Float64Array(9);
    const Rz = so3Exp([0, 0, y]), Ry = so3Exp([0, p, 0]), Rx = so3Exp([r, 0, 0]);
    const tmp = new Float64Array(9);
    // tmp = Rz·Ry, M = tmp·Rx
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) tmp[i * 3 + j] = Rz[i * 3]! * Ry[j]! + Rz[i * 3 + 1]! * Ry[3 + j]! + Rz[i * 3 + 2]! * Ry[6 + j]!;
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) M[i * 3 + j] = tmp[i * 3]! * Rx[j]! + tmp[i * 3 + 1]! * Rx[3 + j]! + tmp[i * 3 + 2]! * Rx[6 + j]!;
    expectMatrixClose(rpyToMatrix(r, p, y), M, { abs: 1e-15 }, 'Rz Ry Rx');
  });
});

describe('round trips (fast-check)', () => {
  it('matrix → quaternion → matrix', () => {
    fc.assert(fc.property(rotArb, (R) => expectMatrixClose(quatToMatrix(matrixToQuat(R)), R, { abs: 1e-14 }, 'R')), { numRuns: 500 });
  });

  it('quaternion → matrix → quaternion (w ≥ 0 representative)', () => {
    const comp = fc.double({ min: -1, max: 1, noNaN: true });
    fc.assert(
      fc.property(fc.tuple(comp, comp, comp, comp).filter((q) => Math.hypot(...q) > 1e-3 && Math.abs(q[0]) > 1e-9), (q4) => {
        const q = quatNormalize(Float64Array.from(q4));
        expectMatrixClose(matrixToQuat(quatToMatrix(q)), q, { abs: 1e-14 }, 'q');
      }),
      { numRuns: 500 },
    );
  });

  it('rotation vector ↔ quaternion agrees with so3Exp/so3Log, including tiny angles and π', () => {
    const angles = fc.oneof(fc.double({ min: 0, max: Math.PI - 1e-9, noNaN: true }), fc.constantFrom(0, 1e-12, 1e-8, 1e-6, 1.0001e-6, Math.PI - 1e-9));
    fc.assert(
      fc.property(axisArb, angles, (ax, th) => {
        const w = ax.map((a) => a * th);
        const q = rotvecToQuat(w);
        expectMatrixClose(quatToMatrix(q), so3Exp(w), { abs: 1e-14 }, 'R(q(ω))');
        const back = quatToRotvec(q);
        expectMatrixClose(back, w, { abs: 1e-12 }, 'ω(q(ω))');
        expectMatrixClose(back, so3Log(so3Exp(w)), { abs: 1e-9 }, 'ω vs so3Log');
        if (th > 1e-300 && th < 1e-5) expect(Math.hypot(back[0]! - w[0]!, back[1]! - w[1]!, back[2]! - w[2]!) / th).toBeLessThan(1e-14);
      }),
      { numRuns: 500 },
    );
    // Exactly π: the quaternion has w = 0 and the rotation vector is ±π·axis.
    for (const ax of [[1, 0, 0], [0, 1, 0], [0, 0, 1], [0.6, 0, 0.8]]) {
      const w = ax.map((a) => a * Math.PI);
      const back = quatToRotvec(rotvecToQuat(w));
      expect(Math.abs(Math.hypot(...back) - Math.PI)).toBeLessThan(1e-15);
      expectMatrixClose(so3Exp(back), so3Exp(w), { abs: 1e-15 }, 'R at π');
    }
    // Angles beyond π come back as the equivalent vector of angle 2π − θ.
    const back = quatToRotvec(rotvecToQuat([0, 0, 4]));
    expectMatrixClose(back, [0, 0, 4 - 2 * Math.PI], { abs: 1e-14 }, 'θ = 4');
  });

  it('rpy → matrix → rpy in the canonical ranges; matrix → rpy → matrix everywhere', () => {
    const ang = fc.double({ min: -Math.PI + 1e-9, max: Math.PI, noNaN: true });
    fc.assert(
      fc.property(ang, fc.double({ min: -Math.PI / 2 + 1e-6, max: Math.PI / 2 - 1e-6, noNaN: true }), ang, (r, p, y) => {
        expectMatrixClose(matrixToRpy(rpyToMatrix(r, p, y)), [r, p, y], { abs: 1e-9 }, 'rpy');
      }),
      { numRuns: 500 },
    );
    fc.assert(fc.property(rotArb, (R) => expectMatrixClose(rpyToMatrix(...(Array.from(matrixToRpy(R)) as [number, number, number])), R, { abs: 1e-14 }, 'R')), { numRuns: 500 });
  });

  it.each([
    [0.7, Math.PI / 2, -0.4],
    [0.7, -Math.PI / 2, -0.4],
    [-2.5, Math.PI / 2, 3.0],
    [1.2, -Math.PI / 2, 1.2],
    [0, Math.PI / 2, 0],
  ])('gimbal lock: rpy (%d, %d, %d) → roll 0, yaw carries the rest, matrix reproduced', (r, p, y) => {
    const R = rpyToMatrix(r, p, y);
    const rpy = matrixToRpy(R);
    expect(rpy[0]).toBe(0);
    expect(Math.abs(rpy[1]! - p)).toBeLessThan(1e-7);
    // pitch = +π/2: only yaw − roll is defined; pitch = −π/2: only yaw + roll.
    const expectedYaw = p > 0 ? y - r : y + r;
    const dy = Math.atan2(Math.sin(rpy[2]! - expectedYaw), Math.cos(rpy[2]! - expectedYaw));
    expect(Math.abs(dy)).toBeLessThan(1e-12);
    expectMatrixClose(rpyToMatrix(rpy[0]!, rpy[1]!, rpy[2]!), R, { abs: 1e-14 }, 'R');
  });

  it('gimbal lock (fast-check): pitch = ±π/2 with any roll and yaw gives roll 0 and reproduces the matrix', () => {
    const ang = fc.double({ min: -Math.PI, max: Math.PI, noNaN: true });
    fc.assert(
      fc.property(ang, fc.constantFrom(Math.PI / 2, -Math.PI / 2), ang, (r, p, y) => {
        const R = rpyToMatrix(r, p, y);
        const rpy = matrixToRpy(R);
        expect(rpy[0]).toBe(0);
        expectMatrixClose(rpyToMatrix(rpy[0]!, rpy[1]!, rpy[2]!), R, { abs: 1e-14 }, 'R');
      }),
      { numRuns: 300 },
    );
  });

  it('near gimbal lock (cos pitch just above the threshold) the matrix is still reproduced', () => {
    for (const eps of [1e-6, 1e-9, 10 * GIMBAL_LOCK_COS_PITCH, 0.5 * GIMBAL_LOCK_COS_PITCH]) {
      for (const sign of [1, -1]) {
        const R = rpyToMatrix(0.9, sign * (Math.PI / 2 - eps), -2.2);
        const rpy = matrixToRpy(R);
        expectMatrixClose(rpyToMatrix(rpy[0]!, rpy[1]!, rpy[2]!), R, { abs: 1e-9 }, `R at eps ${eps}`);
      }
    }
  });
});

describe('4x4 homogeneous matrices', () => {
  it('poseToMatrix4 is row-major and agrees with three; composition matches Matrix4.multiply', () => {
    const a: Pose = { R: so3Exp([0.3, -0.2, 0.9]), t: Float64Array.from([1, -2, 0.5]) };
    const b: Pose = { R: so3Exp([-1.1, 0.4, 0.2]), t: Float64Array.from([0.25, 3, -1]) };
    expectMatrixClose(poseToMatrix4(a), rowMajor(threeMatrix(a.R, a.t)), { abs: 0 }, 'layout');
    const ref = rowMajor(threeMatrix(a.R, a.t).multiply(threeMatrix(b.R, b.t)));
    expectMatrixClose(poseToMatrix4(compose(a, b)), ref, { abs: 1e-14 }, 'compose');
    const back = poseFromMatrix4(poseToMatrix4(a));
    expectMatrixClose(back.R, a.R, { abs: 0 }, 'R');
    expectMatrixClose(back.t, a.t, { abs: 0 }, 't');
  });

  it('poseFromMatrix4 rejects a wrong length and a column-major matrix', () => {
    const a: Pose = { R: so3Exp([0.3, -0.2, 0.9]), t: Float64Array.from([1, -2, 0.5]) };
    expect(() => poseFromMatrix4(new Float64Array(12))).toThrow(RangeError);
    expect(() => poseFromMatrix4(threeMatrix(a.R, a.t).elements)).toThrow(/column-major/);
  });
});

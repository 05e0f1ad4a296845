/**
 * The view residual's factored Jacobian (J_inner · M_k) against central
 * finite differences through each parameter block's update rule.
 */
import { describe, expect, test } from 'vitest';
import { cameraModel } from '../camera/registry.js';
import { compose, se3Exp, poseIdentity, poseToArray12, se3LeftManifold, type Pose } from '../geometry/se3.js';
import { expectMatrixClose, gaussian, numericJacobian, rng } from '../testing/numeric.js';
import { ViewResidual, type ChainFactor } from './view-residual.js';
import { cauchyLoss, huberLoss } from '../solver/loss.js';

const u = rng(17);
const pose = (rot: number, trans: number, t0: number[] = [0, 0, 0]): Pose => {
  const T = se3Exp([rot * gaussian(u), rot * gaussian(u), rot * gaussian(u), trans * gaussian(u), trans * gaussian(u), trans * gaussian(u)]);
  for (let i = 0; i < 3; i++) T.t[i]! += t0[i]!;
  return T;
};

interface Case {
  name: string;
  model: 'pinhole' | 'brown-conrady' | 'kannala-brandt';
  intr: number[];
  chain: ChainFactor[];
  withIntrinsics: boolean;
}

const cases: Case[] = [
  {
    name: 'moving targets: T_ref_cam⁻¹ · T_ref_target, brown-conrady, intrinsics free',
    model: 'brown-conrady',
    intr: [600, 610, 320, 240, -0.2, 0.05, 0.001, -0.001, 0.01],
    chain: [
      { param: 0, sign: -1 },
      { param: 1, sign: 1 },
    ],
    withIntrinsics: true,
  },
  {
    name: 'fixed targets: T_ref_cam⁻¹ · T_origin_ref⁻¹ · T_origin_target, kannala-brandt',
    model: 'kannala-brandt',
    intr: [300, 300, 500, 500, 0.02, -0.004, 0.0005, -0.0001],
    chain: [
      { param: 0, sign: -1 },
      { param: 1, sign: -1 },
      { param: 2, sign: 1 },
    ],
    withIntrinsics: false,
  },
  {
    name: 'fixed targets with intrinsics, pinhole',
    model: 'pinhole',
    intr: [500, 500, 320, 240],
    chain: [
      { param: 0, sign: -1 },
      { param: 1, sign: -1 },
      { param: 2, sign: 1 },
    ],
    withIntrinsics: true,
  },
];

describe('ViewResidual Jacobian', () => {
  test.each(cases)('$name', (c) => {
    const model = cameraModel(c.model);
    const nPose = c.chain.length;
    // Poses chosen so that the target sits about 1.5 m in front of the camera.
    const T_ref_cam = pose(0.2, 0.1);
    const blocks: Float64Array[] = [poseToArray12(T_ref_cam)];
    if (nPose === 2) {
      // T_ref_target = T_ref_cam · (target 1.5 m ahead)
      const ahead = pose(0.2, 0.05, [-0.2, -0.1, 1.5]);
      blocks.push(poseToArray12(compose(T_ref_cam, ahead)));
    } else {
      const T_origin_ref = pose(0.3, 0.5);
      const ahead = pose(0.2, 0.05, [-0.2, -0.1, 1.5]);
      blocks.push(poseToArray12(T_origin_ref));
      blocks.push(poseToArray12(compose(compose(T_origin_ref, T_ref_cam), ahead)));
    }
    const nPts = 7;
    const points = Float64Array.from({ length: 3 * nPts }, (_, i) => (i % 3 === 2 ? 0.05 * gaussian(u) : 0.3 * gaussian(u)));
    const pixels = Float64Array.from({ length: 2 * nPts }, () => 300 + 50 * gaussian(u));
    const invSigma = Float64Array.from({ length: nPts }, () => 1 / (0.5 + u()));
    const intr = Float64Array.from(c.intr);
    const params = c.withIntrinsics ? [...blocks, intr] : blocks;
    const block = new ViewResidual({
      model,
      parameterBlocks: params.map((_, i) => i),
      chain: c.chain,
      intrinsicsParam: c.withIntrinsics ? nPose : -1,
      intrinsics: intr,
      points,
      pixels,
      invSigma,
    });
    const m = block.numResiduals;
    const inner = block.innerSize;
    const J = new Float64Array(m * inner);
    const maps = params.map((p, k) => new Float64Array(inner * (k < nPose ? 6 : p.length)));
    expect(block.evaluate(params, new Float64Array(m), J, maps)).toBe(true);
    params.forEach((p, k) => {
      const tk = k < nPose ? 6 : p.length;
      // Analytic: J_inner · M_k
      const A = new Float64Array(m * tk);
      for (let r = 0; r < m; r++) for (let v = 0; v < tk; v++) {
        let s = 0;
        for (let a = 0; a < inner; a++) s += J[r * inner + a]! * maps[k]![a * tk + v]!;
        A[r * tk + v] = s;
      }
      const f = (x: Float64Array) => {
        const ps = params.slice();
        ps[k] = x;
        const r = new Float64Array(m);
        block.evaluate(ps, r, null, null);
        return r;
      };
      const N = numericJacobian(f, p, tk, (x, i, h) => {
        if (k < nPose) {
          const d = new Float64Array(6);
          d[i] = h;
          const out = new Float64Array(12);
          se3LeftManifold.plus(x, d, out);
          return out;
        }
        const y = Float64Array.from(x);
        y[i]! += h * Math.max(1, Math.abs(y[i]!));
        return y;
      }, 1e-6);
      if (k >= nPose) {
        // Undo the per-coordinate step scaling used for the intrinsics.
        for (let r = 0; r < m; r++) for (let v = 0; v < tk; v++) N[r * tk + v]! /= Math.max(1, Math.abs(p[v]!));
      }
      expectMatrixClose(A, N, { rel: 1e-6 }, `J_r_block${k}`);
    });
  });
});

/** M_kᵀ A M_l for 6x6 row-major matrices: what the engine adds to its (k, l) block. */
function mapped(Mk: Float64Array, A: Float64Array, Ml: Float64Array): Float64Array {
  const out = new Float64Array(36);
  for (let i = 0; i < 6; i++)
    for (let j = 0; j < 6; j++) {
      let s = 0;
      for (let a = 0; a < 6; a++) for (let c = 0; c < 6; c++) s += Mk[a * 6 + i]! * A[a * 6 + c]! * Ml[c * 6 + j]!;
      out[i * 6 + j] = s;
    }
  return out;
}

/** M_kᵀ b. */
function mappedVector(Mk: Float64Array, b: Float64Array): Float64Array {
  const out = new Float64Array(6);
  for (let i = 0; i < 6; i++) for (let a = 0; a < 6; a++) out[i] += Mk[a * 6 + i]! * b[a]!;
  return out;
}

describe('ViewResidual fused linearisation', () => {
  // linearizeInner must give the engine exactly what evaluate() + IRLS weighting
  // (loss.ts: r̃ = √ρ′ r, J̃ = √ρ′ J) + A = J̃ᵀJ̃, b = J̃ᵀr̃ would, once mapped onto the
  // parameter blocks (M_kᵀ A M_l, M_kᵀ b): its inner coordinates may differ.
  const chains = {
    // T_ref_cam⁻¹ · T_ref_target: both fused maps are exactly ∓I.
    moving: [
      { param: 0, sign: -1 },
      { param: 1, sign: 1 },
    ],
    // T_ref_cam⁻¹ · T_origin_ref⁻¹ · T_origin_target: one map stays a full adjoint.
    fixed: [
      { param: 0, sign: -1 },
      { param: 1, sign: -1 },
      { param: 2, sign: 1 },
    ],
  } as const;
  test.each([
    ['no loss', undefined, 'moving'],
    ['huber', huberLoss(0.8), 'moving'],
    ['cauchy', cauchyLoss(0.5), 'moving'],
    ['huber', huberLoss(0.8), 'fixed'],
  ] as const)('matches evaluate() with the loss weighting: %s, %s chain', (_name, loss, chainName) => {
    const model = cameraModel('brown-conrady');
    const T_ref_cam = pose(0.2, 0.1);
    const ahead = pose(0.2, 0.05, [-0.2, -0.1, 1.5]);
    const chain = chains[chainName];
    const nBlocks = chain.length;
    // Fixed chain: T_origin_ref = pose(0.3, -0.2), T_origin_target = T_origin_ref · T_ref_cam · ahead.
    const T_origin_ref = pose(0.3, -0.2, [0.4, 1.1, -0.3]);
    const params =
      nBlocks === 2
        ? [poseToArray12(T_ref_cam), poseToArray12(compose(T_ref_cam, ahead))]
        : [poseToArray12(T_ref_cam), poseToArray12(T_origin_ref), poseToArray12(compose(T_origin_ref, compose(T_ref_cam, ahead)))];
    const nPts = 9;
    const points = Float64Array.from({ length: 3 * nPts }, (_, i) => (i % 3 === 2 ? 0.05 * gaussian(u) : 0.3 * gaussian(u)));
    const pixels = Float64Array.from({ length: 2 * nPts }, () => 300 + 50 * gaussian(u));
    const invSigma = Float64Array.from({ length: nPts }, () => 1 / (0.5 + u()));
    const block = new ViewResidual({
      model,
      parameterBlocks: nBlocks === 2 ? [0, 1] : [0, 1, 2],
      chain: [...chain],
      intrinsicsParam: -1,
      intrinsics: Float64Array.of(600, 610, 320, 240, -0.2, 0.05, 0.001, -0.001, 0.01),
      points,
      pixels,
      invSigma,
      ...(loss ? { loss } : {}),
    });
    const m = block.numResiduals;
    const r = new Float64Array(m);
    const J = new Float64Array(m * 6);
    const maps = Array.from({ length: nBlocks }, () => new Float64Array(36));
    expect(block.evaluate(params, r, J, maps)).toBe(true);
    const Aref = new Float64Array(36);
    const bref = new Float64Array(6);
    let cost = 0;
    const rho = new Float64Array(3);
    for (let g = 0; g < nPts; g++) {
      const s = r[2 * g]! ** 2 + r[2 * g + 1]! ** 2;
      let wgt = 1;
      if (loss) {
        loss.evaluate(s, rho);
        cost += rho[0]!;
        wgt = Math.max(rho[1]!, 0);
      } else cost += s;
      for (let q = 2 * g; q < 2 * g + 2; q++) {
        for (let a = 0; a < 6; a++) {
          bref[a]! += wgt * J[q * 6 + a]! * r[q]!;
          for (let c = 0; c < 6; c++) Aref[a * 6 + c]! += wgt * J[q * 6 + a]! * J[q * 6 + c]!;
        }
      }
    }
    const A = new Float64Array(36);
    const b = new Float64Array(6);
    const out = new Float64Array(1);
    const fusedMaps = Array.from({ length: nBlocks }, () => new Float64Array(36));
    expect(block.linearizeInner(params, A, b, fusedMaps, new Float64Array(3), out)).toBe(true);
    expect(out[0]).toBeCloseTo(0.5 * cost, 10);
    for (let k = 0; k < nBlocks; k++) {
      expectMatrixClose(mappedVector(fusedMaps[k]!, b), mappedVector(maps[k]!, bref), { rel: 1e-12 }, `M_${k}ᵀ b`);
      for (let l = 0; l < nBlocks; l++) {
        expectMatrixClose(mapped(fusedMaps[k]!, A, fusedMaps[l]!), mapped(maps[k]!, Aref, maps[l]!), { rel: 1e-12 }, `M_${k}ᵀ A M_${l}`);
      }
    }
    // The last pose block's map is exactly I (its own tangent), and so is every map equal to it up to sign.
    const identity = (s: number) => Float64Array.from({ length: 36 }, (_, q) => (q % 7 === 0 ? s : 0));
    expect(Array.from(fusedMaps[nBlocks - 1]!)).toEqual(Array.from(identity(1)));
    expect(Array.from(fusedMaps[nBlocks - 2]!)).toEqual(Array.from(identity(-1)));
  });

  test('defers to evaluate() when the intrinsics are free', () => {
    const block = new ViewResidual({
      model: cameraModel('pinhole'),
      parameterBlocks: [0, 1],
      chain: [{ param: 0, sign: 1 }],
      intrinsicsParam: 1,
      intrinsics: Float64Array.of(500, 500, 320, 240),
      points: Float64Array.of(0, 0, 1, 0.1, 0, 1, 0, 0.1, 1),
      pixels: Float64Array.of(320, 240, 370, 240, 320, 290),
      invSigma: Float64Array.of(1, 1, 1),
    });
    const params = [poseToArray12(pose(0, 0)), Float64Array.of(500, 500, 320, 240)];
    expect(block.linearizeInner(params, new Float64Array(100), new Float64Array(10), null, new Float64Array(3), new Float64Array(1))).toBeUndefined();
  });
});

describe('ViewResidual chain C⁻¹ · F shortcut', () => {
  test('gives the same engine contributions as the general chain walk', () => {
    // The general walk is taken when the chain carries a constant identity factor in front.
    const model = cameraModel('pinhole');
    const T_ref_cam = pose(0.3, -0.2, [0.2, 0.1, 0.05]);
    const T_ref_target = compose(T_ref_cam, pose(0.1, 0.2, [0.1, -0.1, 2]));
    const params = [poseToArray12(T_ref_cam), poseToArray12(T_ref_target)];
    const spec = {
      model,
      parameterBlocks: [0, 1],
      intrinsicsParam: -1,
      intrinsics: Float64Array.of(500, 505, 320, 240),
      points: Float64Array.of(0, 0, 0, 0.2, 0, 0, 0, 0.2, 0, 0.2, 0.2, 0.01),
      pixels: Float64Array.of(330, 250, 380, 245, 325, 300, 390, 310),
      invSigma: Float64Array.of(1, 2, 1, 0.5),
    };
    const short = new ViewResidual({ ...spec, chain: [{ param: 0, sign: -1 }, { param: 1, sign: 1 }] });
    const general = new ViewResidual({
      ...spec,
      chain: [{ param: -1, sign: 1, constant: poseIdentity() }, { param: 0, sign: -1 }, { param: 1, sign: 1 }],
    });
    const run = (block: ViewResidual) => {
      const A = new Float64Array(36);
      const b = new Float64Array(6);
      const maps = [new Float64Array(36), new Float64Array(36)];
      const out = new Float64Array(1);
      expect(block.linearizeInner(params, A, b, maps, new Float64Array(3), out)).toBe(true);
      return { blocks: [0, 1].flatMap((k) => [0, 1].map((l) => mapped(maps[k]!, A, maps[l]!))), g: [0, 1].map((k) => mappedVector(maps[k]!, b)), cost: out[0]! };
    };
    const s = run(short);
    const g = run(general);
    expect(s.cost).toBeCloseTo(g.cost, 9);
    s.blocks.forEach((B, q) => expectMatrixClose(B, g.blocks[q]!, { rel: 1e-12 }, `block ${q}`));
    s.g.forEach((v, q) => expectMatrixClose(v, g.g[q]!, { rel: 1e-12 }, `gradient ${q}`));
  });
});

describe('ViewResidual.setDetections', () => {
  test('after dropping detections, the block linearises exactly like a block built with the remaining ones', () => {
    const model = cameraModel('pinhole');
    const T_ref_cam = pose(0.1, -0.2, [0.3, 0, 0.1]);
    const params = [poseToArray12(T_ref_cam), poseToArray12(compose(T_ref_cam, pose(0.2, 0.1, [0, 0.1, 1.8])))];
    const points = Float64Array.of(0, 0, 0, 0.2, 0, 0, 0, 0.2, 0, 0.2, 0.2, 0, 0.1, 0.1, 0);
    const pixels = Float64Array.of(300, 240, 360, 238, 302, 300, 365, 302, 900, 900); // the last one is gross
    const invSigma = Float64Array.of(1, 1, 2, 1, 1);
    const chain: ChainFactor[] = [{ param: 0, sign: -1 }, { param: 1, sign: 1 }];
    const base = { model, parameterBlocks: [0, 1], chain, intrinsicsParam: -1, intrinsics: Float64Array.of(500, 500, 320, 240) };
    const block = new ViewResidual({ ...base, points, pixels, invSigma });
    expect(block.numResiduals).toBe(10);
    block.setDetections(points.slice(0, 12), pixels.slice(0, 8), invSigma.slice(0, 4));
    expect(block.numResiduals).toBe(8);
    expect(block.count).toBe(4);
    const fresh = new ViewResidual({ ...base, points: points.slice(0, 12), pixels: pixels.slice(0, 8), invSigma: invSigma.slice(0, 4) });
    const run = (b: ViewResidual) => {
      const A = new Float64Array(36);
      const g = new Float64Array(6);
      const out = new Float64Array(1);
      expect(b.linearizeInner(params, A, g, [new Float64Array(36), new Float64Array(36)], new Float64Array(3), out)).toBe(true);
      return [...A, ...g, out[0]!];
    };
    expect(run(block)).toEqual(run(fresh));
  });
});

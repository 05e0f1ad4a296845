/**
 * Export of the transform tree: URDF parsed back with the fast-xml-parser
 * package and recomposed matches the solver to 1e-12; every composition is
 * cross-checked with the three package's Matrix4 / Quaternion / Euler.
 */
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as nodePath from 'node:path';
import { beforeAll, describe, expect, test } from 'vitest';
import { XMLParser } from 'fast-xml-parser';
import { Euler, Matrix4, Quaternion, Vector3 } from 'three';
import { parse as parseYamlText } from 'yaml';
import { compose, poseFrom, type Pose } from '../geometry/se3.js';
import { rpyToMatrix } from '../geometry/rotation.js';
import { simulate } from '../rig/simulate.js';
import { sessionFromSimulation } from '../rig/simulate-session.js';
import { solveRig, type RigSolution } from '../rig/solve.js';
import { buildRigFile } from '../rig/output.js';
import { threeCameraBench } from '../testing/check-fixtures.js';
import { R_FWD_OPT } from '../rig/description.js';
import type { RigFile } from '../io/types.js';
import { toCompactYaml } from '../io/rig-file.js';
import { buildTransformTree, composeTree, sanitiseFrameName, transformTreeObject, T_optical_body } from './transforms.js';
import { treeToUrdf } from './urdf.js';
import { loadBasePoseFile, parseBasePoseValues } from './base-pose.js';

const desc = threeCameraBench();
let solution: RigSolution;
let rig: RigFile;
const BASE_POSE = '0.2,0.06,0.9,1.5,-7,12'; // x,y,z (m), roll,pitch,yaw (deg)
const RAD = Math.PI / 180;

beforeAll(() => {
  solution = solveRig(sessionFromSimulation(simulate(desc, { frames: 20, seed: 9, pixelNoisePx: 0.3 })));
  rig = buildRigFile(solution);
});

/** three.js Matrix4 of an URDF origin: translation and fixed-axis rpy (URDF: R = Rz·Ry·Rx, i.e. three's Euler order 'ZYX'). */
function threeOrigin(xyz: number[], rpy: number[]): Matrix4 {
  const q = new Quaternion().setFromEuler(new Euler(rpy[0]!, rpy[1]!, rpy[2]!, 'ZYX'));
  return new Matrix4().compose(new Vector3(xyz[0]!, xyz[1]!, xyz[2]!), q, new Vector3(1, 1, 1));
}

/** Pose → three Matrix4 (three stores column-major; Matrix4.set takes row-major arguments). */
function threeFromPose(T: Pose): Matrix4 {
  const R = T.R;
  return new Matrix4().set(R[0]!, R[1]!, R[2]!, T.t[0]!, R[3]!, R[4]!, R[5]!, T.t[1]!, R[6]!, R[7]!, R[8]!, T.t[2]!, 0, 0, 0, 1);
}

function expectPoseMatchesThree(T: Pose, M: Matrix4, tol: number, what: string): void {
  const e = M.elements; // column-major
  let worst = 0;
  for (let r = 0; r < 3; r++) {
    for (let c = 0; c < 3; c++) worst = Math.max(worst, Math.abs(T.R[r * 3 + c]! - e[c * 4 + r]!));
    worst = Math.max(worst, Math.abs(T.t[r]! - e[12 + r]!));
  }
  expect(worst, what).toBeLessThan(tol);
}

function parseUrdf(text: string): { root: string; joints: { parent: string; child: string; xyz: number[]; rpy: number[] }[]; links: string[] } {
  const parser = new XMLParser({ ignoreAttributes: false, attributeNamePrefix: '', isArray: (name, _jpath, _leaf, isAttribute) => !isAttribute && (name === 'link' || name === 'joint') });
  const doc = parser.parse(text) as { robot: { link: { name: string }[]; joint: { type: string; parent: { link: string }; child: { link: string }; origin: { xyz: string; rpy: string } }[] } };
  const links = doc.robot.link.map((l) => l.name);
  const joints = doc.robot.joint.map((j) => {
    expect(j.type).toBe('fixed');
    return { parent: j.parent.link, child: j.child.link, xyz: j.origin.xyz.split(' ').map(Number), rpy: j.origin.rpy.split(' ').map(Number) };
  });
  const children = new Set(joints.map((j) => j.child));
  const roots = links.filter((l) => !children.has(l));
  expect(roots, JSON.stringify(joints.map((j) => [j.parent, j.child]))).toHaveLength(1);
  return { root: roots[0]!, joints, links };
}

describe('URDF export', () => {
  test('parsed back (fast-xml-parser) and recomposed under a base frame: every camera matches the solver to 1e-12, and three.js agrees', () => {
    const T_base_mount = parseBasePoseValues(BASE_POSE);
    const tree = buildTransformTree(rig, { base: { frame: 'robot_base', T_base_mount, mountFrame: 'body' }, bodyFrames: true });
    const text = treeToUrdf(tree, { caution: 'Caution: test.', source: 'rig.yaml' });
    expect(text).toContain('<!-- Caution: test. -->');
    const urdf = parseUrdf(text);
    expect(urdf.root).toBe('robot_base');
    // Our recomposition of the parsed joints.
    const ours = composeTree({ root: urdf.root, transforms: urdf.joints.map((j) => ({ parent: j.parent, child: j.child, T_parent_child: poseFrom(rpyToMatrix(j.rpy[0]!, j.rpy[1]!, j.rpy[2]!), j.xyz) })) });
    // three.js recomposition of the same joints (independent rpy → matrix and products).
    const byChild = new Map(urdf.joints.map((j) => [j.child, j]));
    const threeChain = (frame: string): Matrix4 => {
      const j = byChild.get(frame);
      return j ? threeChain(j.parent).multiply(threeOrigin(j.xyz, j.rpy)) : new Matrix4();
    };
    // Expected: T_base_cam = T_base_mount · R_fwd_opt · T_ref_cam (solver), built with three only.
    const v = BASE_POSE.split(',').map(Number);
    const threeBaseMount = threeOrigin(v.slice(0, 3), v.slice(3).map((x) => x * RAD));
    const threeMountOptical = threeFromPose(poseFrom(R_FWD_OPT, [0, 0, 0]));
    for (const cam of solution.cameras) {
      const expected = threeBaseMount.clone().multiply(threeMountOptical).multiply(threeFromPose(cam.T_ref_cam));
      expectPoseMatchesThree(ours.get(`${cam.name}_optical`)!, expected, 1e-12, `${cam.name} (ours vs three)`);
      expectPoseMatchesThree(ours.get(`${cam.name}_optical`)!, threeChain(`${cam.name}_optical`), 1e-12, `${cam.name} (URDF chain in three)`);
      // Body frame: x forward = optical z, y left = −optical x, z up = −optical y.
      const body = ours.get(`${cam.name}_body`)!;
      const opt = ours.get(`${cam.name}_optical`)!;
      for (const [bc, oc, s] of [[0, 2, 1], [1, 0, -1], [2, 1, -1]] as const) {
        for (let r = 0; r < 3; r++) expect(Math.abs(body.R[r * 3 + bc]! - s * opt.R[r * 3 + oc]!)).toBeLessThan(1e-12);
      }
      expectPoseMatchesThree(body, threeChain(`${cam.name}_body`), 1e-12, `${cam.name} body`);
    }
  });

  test('with the designed mount of the reference camera, the exported cameras land where the rig description puts them (to the calibration error)', () => {
    const left = desc.cameras.find((c) => c.spec.name === 'left')!;
    // stereo-bench.yaml: left at position [0, 0.06, 0], mount_rpy_deg [0, 0, 0] (body convention).
    const tree = buildTransformTree(rig, { base: { frame: 'bench', T_base_mount: parseBasePoseValues('0,0.06,0,0,0,0'), mountFrame: 'body' } });
    const poses = composeTree(tree);
    expectPoseMatchesThree(poses.get('left_optical')!, threeFromPose(left.T_body_cam), 1e-15, 'left');
    for (const c of desc.cameras) {
      const T = poses.get(`${c.spec.name}_optical`)!;
      const dt = Math.hypot(T.t[0]! - c.T_body_cam.t[0]!, T.t[1]! - c.T_body_cam.t[1]!, T.t[2]! - c.T_body_cam.t[2]!);
      expect(dt, c.spec.name).toBeLessThan(0.001);
    }
  });

  test('optical mount frame: the base pose places the root optical frame itself', () => {
    const T = parseBasePoseValues(BASE_POSE);
    const tree = buildTransformTree(rig, { base: { frame: 'b', T_base_mount: T, mountFrame: 'optical' } });
    expectPoseMatchesThree(composeTree(tree).get(`${rig.root}_optical`)!, threeFromPose(T), 1e-15, 'root');
  });
});

describe('JSON and YAML export', () => {
  test('translation, quaternion_wxyz and the 4x4 matrix agree (three.js Quaternion) and recompose to the solver', () => {
    const tree = buildTransformTree(rig, { bodyFrames: true });
    const obj = transformTreeObject(tree, 'Caution: test.', 'rig.yaml');
    for (const text of [JSON.stringify(obj), toCompactYaml(obj)]) {
      const back = parseYamlText(text) as { root: string; caution: string; transforms: { parent: string; child: string; translation: number[]; quaternion_wxyz: number[]; matrix: number[][] }[] };
      expect(back.caution).toBe('Caution: test.');
      for (const tr of back.transforms) {
        const [w, x, y, z] = tr.quaternion_wxyz as [number, number, number, number];
        const M = new Matrix4().compose(new Vector3(...(tr.translation as [number, number, number])), new Quaternion(x, y, z, w), new Vector3(1, 1, 1));
        const rows = tr.matrix;
        const flat = new Matrix4().set(...(rows.flat() as [number, number, number, number, number, number, number, number, number, number, number, number, number, number, number, number]));
        for (let i = 0; i < 16; i++) expect(Math.abs(M.elements[i]! - flat.elements[i]!)).toBeLessThan(1e-12);
      }
      const poses = composeTree({
        root: back.root,
        transforms: back.transforms.map((t) => ({ parent: t.parent, child: t.child, T_parent_child: poseFrom([...t.matrix[0]!.slice(0, 3), ...t.matrix[1]!.slice(0, 3), ...t.matrix[2]!.slice(0, 3)], [t.matrix[0]![3]!, t.matrix[1]![3]!, t.matrix[2]![3]!]) })),
      });
      for (const cam of solution.cameras) expectPoseMatchesThree(poses.get(`${cam.name}_optical`)!, threeFromPose(cam.T_ref_cam), 1e-12, cam.name);
    }
  });
});

describe('frame names and mount pose input', () => {
  test('names are sanitised to valid link names; a clash is an error', () => {
    expect(sanitiseFrameName('front-left.cam')).toBe('front_left_cam');
    expect(sanitiseFrameName('3d')).toBe('_3d');
    const clash: RigFile = { ...rig, cameras: rig.cameras.map((c) => (c.name === 'middle' ? { ...c, name: 'right.x' } : c.name === 'right' ? { ...c, name: 'right-x' } : c)) };
    expect(() => buildTransformTree(clash)).toThrow(/right_x_optical/);
    expect(() => buildTransformTree(rig, { base: { frame: 'left optical', T_base_mount: T_optical_body(), mountFrame: 'body' } })).toThrow(/left_optical/);
  });

  test('mount pose file: rpy_deg and the equivalent quaternion_wxyz give the same pose; bad files list their issues', () => {
    const dir = fs.mkdtempSync(nodePath.join(os.tmpdir(), 'rigsolve-mount-'));
    const a = nodePath.join(dir, 'a.yaml');
    const b = nodePath.join(dir, 'b.yaml');
    const bad = nodePath.join(dir, 'bad.yaml');
    fs.writeFileSync(a, 'format: mount-pose/1\ntranslation: [0.2, 0, 0.9]\nrpy_deg: [0, 0, 90]\n');
    fs.writeFileSync(b, `translation: [0.2, 0, 0.9]\nquaternion_wxyz: [${Math.SQRT1_2}, 0, 0, ${Math.SQRT1_2}]\nframe: optical\n`);
    fs.writeFileSync(bad, 'translation: [0.2, 0]\nrpy_deg: [0, 0, 90]\nquaternion_wxyz: [1, 0, 0, 0]\n');
    const pa = loadBasePoseFile(a);
    const pb = loadBasePoseFile(b);
    expect(pa.frame).toBeUndefined();
    expect(pb.frame).toBe('optical');
    expectPoseMatchesThree(pa.T_base_mount, threeFromPose(pb.T_base_mount), 1e-15, 'same pose');
    expect(() => loadBasePoseFile(bad)).toThrow(/bad\.yaml.*translation/);
    expect(() => parseBasePoseValues('1,2,3')).toThrow(/six numbers/);
    const composed = compose(pa.T_base_mount, T_optical_body());
    expect(composed.t[2]).toBe(0.9);
  });
});

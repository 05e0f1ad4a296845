/**
 * How well a given rig explains a session: the camera extrinsics and
 * intrinsics are held at the rig file's values and only the target pose of
 * every (frame, target) is fitted. With the cameras fixed those poses are
 * independent, so each is a small least-squares problem of its own (6
 * unknowns, the detections of every camera that saw the target in that
 * frame); no joint solve is needed.
 *
 * Steps: PnP per view (as in the solve) → frame pose from the views at the
 * rig's extrinsics (views that contradict the others are set aside) → a
 * robust (Huber) refinement per frame → outlier rejection with the rule of
 * solveRig (whitened error > OUTLIER_SIGMAS robust sigmas; a view with more
 * than half its detections rejected is set aside) → a plain least-squares
 * refinement per frame → residuals.
 *
 * The result has the shape of a RigSolution, so the same report renders it.
 * In a fixed_targets scene the targets are still fitted per (frame, target)
 * here (a looser model than the solve's fixed target layout), which is enough
 * to show how the rig's cameras agree with each other.
 * Its camera covariances are the rig file's (what the rig claims); sigma0 is
 * recomputed from the residuals with n = 6 per fitted frame pose.
 */
import { cameraModel } from '../camera/registry.js';
import type { CameraModel } from '../camera/model.js';
import { InputError, type InputIssue } from '../errors.js';
import { poseFrom, se3LeftManifold, type Pose } from '../geometry/se3.js';
import { quatToMatrix } from '../geometry/rotation.js';
import type { RigFile, Session } from '../io/types.js';
import { Problem, solve, huberLoss, type IterationRecord, type LossFunction, type SolveSummary } from '../solver/index.js';
import { MIN_VIEW_POINTS, groupByFrameTarget, initialiseFramePoses, initialiseViewPoses } from './initialise.js';
import { OUTLIER_SIGMAS, solutionFigures, type CameraResult, type RigSolution } from './solve.js';
import { poseFromBlock, poseToBlock, ViewResidual, type ChainFactor } from './view-residual.js';
import { cameraUsage, groupViews, viewData, type View } from './views.js';

export interface EvaluateOptions {
  /** Progress of long stages ('pnp', 'frames'). */
  onProgress?: (stage: string, done: number, total: number) => void;
}

function median(a: number[]): number {
  if (a.length === 0) return NaN;
  const s = [...a].sort((x, y) => x - y);
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : 0.5 * (s[m - 1]! + s[m]!);
}

/** Joins a session with a rig file by camera name; throws InputError listing every mismatch. */
function matchCameras(session: Session, rig: RigFile, rigPath: string) {
  const issues: InputIssue[] = [];
  const byName = new Map(rig.cameras.map((c) => [c.name, c]));
  const entries = session.cameras.map((c) => {
    const r = byName.get(c.name);
    if (!r) {
      issues.push({ file: rigPath, message: `camera "${c.name}" of the session is not in the rig file`, hint: 'use the rig file solved from this rig, or remove the camera from the session' });
      return undefined;
    }
    if (r.resolution[0] !== c.resolution[0] || r.resolution[1] !== c.resolution[1]) {
      issues.push({
        file: rigPath,
        message: `camera "${c.name}" has resolution ${r.resolution.join('x')} in the rig file but ${c.resolution.join('x')} in the session`,
        hint: 'the detections must come from the same image size the rig was calibrated at',
      });
    }
    return r;
  });
  if (!session.cameras.some((c) => c.name === rig.root)) {
    issues.push({ file: rigPath, message: `the rig's root camera "${rig.root}" is not in the session`, hint: 'the session must include the reference camera' });
  }
  if (issues.length) throw new InputError('report.rig_mismatch', issues);
  return entries.map((e) => e!);
}

/** Sums per-frame summaries into one stage summary. */
function aggregate(list: SolveSummary[], what: string): SolveSummary {
  const worst = list.some((s) => s.termination === 'failure') ? 'failure' : list.some((s) => s.termination === 'no_convergence') ? 'no_convergence' : 'converged';
  const bad = list.filter((s) => s.termination !== 'converged').length;
  const iterations: IterationRecord[] = [];
  for (const s of list) iterations.push(...s.iterations);
  const sum = (f: (s: SolveSummary) => number) => list.reduce((a, s) => a + f(s), 0);
  return {
    termination: worst,
    message: `${list.length} ${what} refined with the rig's cameras held fixed; ${bad === 0 ? 'all converged' : `${bad} did not converge`}`,
    initialCost: sum((s) => s.initialCost),
    finalCost: sum((s) => s.finalCost),
    iterations,
    acceptedSteps: sum((s) => s.acceptedSteps),
    rejectedSteps: sum((s) => s.rejectedSteps),
    totalSeconds: sum((s) => s.totalSeconds),
    numResiduals: sum((s) => s.numResiduals),
    numFreeParameters: sum((s) => s.numFreeParameters),
    numParameterBlocks: sum((s) => s.numParameterBlocks),
    numResidualBlocks: sum((s) => s.numResidualBlocks),
    numEliminatedBlocks: 0,
    reducedSystemSize: sum((s) => s.reducedSystemSize),
  };
}

/** Residuals of `session` at the extrinsics and intrinsics of `rig` (see the module comment). */
export function evaluateRig(session: Session, rig: RigFile, rigPath = 'rig file', opts: EvaluateOptions = {}): RigSolution {
  const entries = matchCameras(session, rig, rigPath);
  const nc = session.cameras.length;
  const nt = session.targets.length;
  const names = session.cameras.map((c) => c.name);
  const reference = names.indexOf(rig.root);
  const models: CameraModel[] = entries.map((r) => cameraModel(r.model));
  const intrinsics = entries.map((r) => Float64Array.from([...r.focal, ...r.center, ...r.distortion]));
  const T_ref_cam: Pose[] = entries.map((r) => poseFrom(quatToMatrix(r.quaternion_wxyz), r.translation));

  const views = groupViews(session);
  initialiseViewPoses(session, views, models, intrinsics, opts.onProgress ? (done, total) => opts.onProgress!('pnp', done, total) : undefined);
  const frameInit = initialiseFramePoses(views, nt, T_ref_cam, names);

  const d = session.detections;
  const invSigma = new Float64Array(d.count);
  for (let i = 0; i < d.count; i++) invSigma[i] = 1 / (Number.isNaN(d.sigma[i]!) ? session.cameras[d.camera[i]!]!.pixelSigma : d.sigma[i]!);
  const rejectedRow = new Uint8Array(d.count);

  const groups = [...groupByFrameTarget(views, nt)].filter(([key]) => frameInit.poses.has(key));
  const frameValues = new Map<number, Float64Array>(groups.map(([key]) => [key, poseToBlock(frameInit.poses.get(key)!)]));

  interface Block {
    view: View;
    rows: Int32Array;
    residual: ViewResidual;
  }
  /** Residual blocks of one frame group at the current frame pose (views still used, rows not rejected). */
  const blocksOf = (key: number, group: View[], loss?: LossFunction): Block[] => {
    const out: Block[] = [];
    for (const view of group) {
      if (view.status !== 'used') continue;
      const rows = Int32Array.from(Array.from(view.rows).filter((r) => !rejectedRow[r]));
      const { points, pixels } = viewData(session, view, rows);
      const chain: ChainFactor[] = [
        { param: -1, sign: -1, constant: T_ref_cam[view.camera]! },
        { param: 0, sign: 1 },
      ];
      const residual = new ViewResidual({
        model: models[view.camera]!,
        parameterBlocks: [0],
        chain,
        intrinsicsParam: -1,
        intrinsics: intrinsics[view.camera]!,
        points,
        pixels,
        invSigma: Float64Array.from(rows, (r) => invSigma[r]!),
        ...(loss ? { loss } : {}),
      });
      if (!residual.evaluate([frameValues.get(key)!], new Float64Array(residual.numResiduals), null, null)) {
        view.status = 'unprojectable';
        view.reason = "some of its points do not project into the camera at the frame pose implied by the rig's extrinsics";
        continue;
      }
      out.push({ view, rows, residual });
    }
    return out;
  };
  /** Whitened error norm per row of each block. */
  const norms = (key: number, blocks: Block[]): Float64Array[] =>
    blocks.map((b) => {
      const r = new Float64Array(b.residual.numResiduals);
      if (!b.residual.evaluate([frameValues.get(key)!], r, null, null)) r.fill(Infinity);
      return Float64Array.from({ length: r.length / 2 }, (_, k) => Math.hypot(r[2 * k]!, r[2 * k + 1]!));
    });
  const refineAll = (loss: LossFunction | undefined, stage: string): SolveSummary => {
    const summaries: SolveSummary[] = [];
    let done = 0;
    const step = Math.max(1, Math.ceil(groups.length / 100));
    for (const [key, group] of groups) {
      const blocks = blocksOf(key, group, loss);
      if (blocks.length > 0) {
        const problem = new Problem();
        problem.addParameterBlock({ values: frameValues.get(key)!, manifold: se3LeftManifold, label: `frame ${session.frames[group[0]!.frame]}` });
        for (const b of blocks) problem.addResidualBlock(b.residual);
        summaries.push(solve(problem, {}));
      }
      if (++done % step === 0 || done === groups.length) opts.onProgress?.(stage, done, groups.length);
    }
    return aggregate(summaries, 'frame poses');
  };

  // Robust scale at the initial poses, Huber refinement, rejection, plain refinement.
  const initialSq: number[] = [];
  for (const [key, group] of groups) for (const e of norms(key, blocksOf(key, group))) for (const x of e) initialSq.push(x * x);
  const sigmaInit = Math.sqrt(median(initialSq) / (2 * Math.LN2));
  const stages: { name: string; summary: SolveSummary }[] = [];
  stages.push({ name: 'per-frame refinement (huber)', summary: refineAll(huberLoss(2 * Math.max(sigmaInit, 1e-6)), 'frames (robust)') });
  const afterSq: number[] = [];
  const all: { key: number; blocks: Block[]; e: Float64Array[] }[] = [];
  for (const [key, group] of groups) {
    const blocks = blocksOf(key, group);
    const e = norms(key, blocks);
    all.push({ key, blocks, e });
    for (const x of e) for (const y of x) afterSq.push(y * y);
  }
  const limit = OUTLIER_SIGMAS * Math.sqrt(median(afterSq) / (2 * Math.LN2));
  for (const { blocks, e } of all) {
    blocks.forEach((b, i) => {
      const bad = e[i]!.filter((x) => !(x <= limit)).length;
      if (bad > 0.5 * e[i]!.length || b.rows.length - bad < MIN_VIEW_POINTS) {
        b.view.status = 'too_many_outliers';
        b.view.reason = `${bad} of ${e[i]!.length} detections exceed ${OUTLIER_SIGMAS.toFixed(1)} robust sigmas at the rig's extrinsics`;
        return;
      }
      e[i]!.forEach((x, k) => {
        if (!(x <= limit)) rejectedRow[b.rows[k]!] = 1;
      });
    });
  }
  const final = refineAll(undefined, 'frames');
  stages.push({ name: 'per-frame refinement (least squares)', summary: final });

  // Residuals, per-camera statistics, sigma0.
  const residualsPx = new Float64Array(2 * d.count).fill(NaN);
  const detectionUsed = new Uint8Array(d.count);
  const sq = new Float64Array(nc);
  const used = new Int32Array(nc);
  let whitenedSq = 0;
  let m = 0;
  let fittedPoses = 0;
  for (const [key, group] of groups) {
    const blocks = blocksOf(key, group);
    if (blocks.length > 0) fittedPoses++;
    for (const b of blocks) {
      const r = new Float64Array(b.residual.numResiduals);
      b.residual.evaluate([frameValues.get(key)!], r, null, null);
      for (let k = 0; k < b.rows.length; k++) {
        const i = b.rows[k]!;
        const du = r[2 * k]! / invSigma[i]!;
        const dv = r[2 * k + 1]! / invSigma[i]!;
        residualsPx[2 * i] = du;
        residualsPx[2 * i + 1] = dv;
        detectionUsed[i] = 1;
        sq[b.view.camera]! += du * du + dv * dv;
        used[b.view.camera]!++;
        whitenedSq += r[2 * k]! ** 2 + r[2 * k + 1]! ** 2;
        m += 2;
      }
    }
  }
  const sigma0 = m > 6 * fittedPoses ? Math.sqrt(whitenedSq / (m - 6 * fittedPoses)) : NaN;
  const detPerCam = new Int32Array(nc);
  for (let i = 0; i < d.count; i++) detPerCam[d.camera[i]!]!++;
  const cameras: CameraResult[] = names.map((name, c) => {
    return {
      intrinsicsSolved: false,
      intrinsicsCovariance: null,
      name,
      index: c,
      isReference: c === reference,
      T_ref_cam: T_ref_cam[c]!,
      covariance: Float64Array.from(entries[c]!.covariance),
      model: models[c]!,
      intrinsics: intrinsics[c]!,
      ...cameraUsage(views, c, sq[c]!, used[c]!, detPerCam[c]!),
    };
  });
  const joint = new Float64Array(36 * nc * nc);
  cameras.forEach((cam, c) => {
    for (let i = 0; i < 6; i++) for (let j = 0; j < 6; j++) joint[(6 * c + i) * 6 * nc + 6 * c + j] = cam.covariance[i * 6 + j]!;
  });
  const totalSq = sq.reduce((a, b) => a + b, 0);
  const totalUsed = used.reduce((a, b) => a + b, 0);
  const warnings: string[] = [];
  for (const c of cameras) if (c.detectionsUsed === 0) warnings.push(`camera ${c.name} has no usable detections in this session: its extrinsic is not checked by this report`);
  // Fitted target poses, keyed like RigSolution.framePoses on main (`${frame}\u0000${target}`).
  const framePoses = new Map<string, Pose>();
  for (const [key, group] of groups) {
    const v = group[0]!;
    framePoses.set(`${session.frames[v.frame]}\u0000${session.targets[v.target]!.name}`, poseFromBlock(frameValues.get(key)!));
  }
  // Built without a type annotation so that fields RigSolution may gain stay assignable either way.
  const result = {
    framePoses,
    targets: [] as { name: string; T_origin_target: Pose; covariance: Float64Array }[],
    session,
    reference,
    cameras,
    jointCovariance: joint,
    sigma0,
    ...solutionFigures(session, views, names, stages, totalSq, totalUsed),
    warnings,
    initParent: names.map((_, c) => (c === reference ? -1 : reference)),
    detectionUsed,
    residualsPx,
  };
  return result;
}


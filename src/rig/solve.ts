/**
 * From a session to a calibrated rig: initialisation over the view graph,
 * a robust joint solve, outlier rejection, a final least-squares solve and
 * the covariance of every camera extrinsic.
 *
 * Unknowns (moving_targets): T_ref_cam per camera (the reference camera is
 * fixed at the identity: the gauge) and T_ref_target per (frame, target),
 * which the solver eliminates by the Schur complement. Each view's residual
 * uses the chain T_cam_target = T_ref_cam⁻¹ · T_ref_target.
 *
 * Outlier rule: with e the whitened reprojection error norm of a detection
 * (2 degrees of freedom) and the robust scale σ̂ = sqrt(median(e²) / (2 ln 2))
 * (the median of a χ²₂ variable is 2 ln 2), a detection is rejected when
 * e > 3.717 σ̂ = sqrt(χ²₂ 99.9 % quantile) σ̂ — about 3.7 sigma, inside the 3 to
 * 5 sigma that is common practice. A view with more than half its
 * detections rejected, or fewer than MIN_VIEW_POINTS left, is rejected whole.
 */
import { cameraModel } from '../camera/registry.js';
import type { CameraModel } from '../camera/model.js';
import { adjoint, inverse, poseClone, se3LeftManifold, type Pose } from '../geometry/se3.js';
import type { Session } from '../io/types.js';
import {
  Problem,
  solve,
  huberLoss,
  cauchyLoss,
  computeCovariance,
  type LmOptions,
  type SolveSummary,
  type IterationRecord,
  type LossFunction,
} from '../solver/index.js';
import { RigSolveError } from './errors.js';
import {
  MIN_VIEW_POINTS,
  buildViewGraph,
  frameTargetKey,
  initialiseFramePoses,
  initialiseViewPoses,
  spanningTree,
} from './initialise.js';
import { poseFromBlock, poseToBlock, ViewResidual, type ChainFactor } from './view-residual.js';
import { groupViews, viewData, type View } from './views.js';
import { captureWarnings, poorlyConstrainedMessage } from './diagnostics.js';

/** sqrt of the 99.9 % quantile of χ² with 2 degrees of freedom: sqrt(−2 ln 0.001). */
export const OUTLIER_SIGMAS = Math.sqrt(-2 * Math.log(0.001));

export interface RigSolveOptions {
  /** Robust loss of the first joint solve (whitened units). Default 'huber'. */
  loss: 'huber' | 'cauchy' | 'none';
  /** Loss scale in robust sigmas. Default 2. */
  lossScaleSigmas: number;
  /** Rejection threshold in robust sigmas (see module comment). Default 3.717. */
  outlierSigmas: number;
  /** Rounds of reject-and-resolve after the robust solve. Default 3. */
  maxRejectionRounds: number;
  /** Options passed to the LM engine. */
  lm: Partial<LmOptions>;
  /** Iteration log: stage name and the engine's record. */
  onIteration?: (stage: string, record: IterationRecord) => void;
  /** Progress of long stages (PnP over many views). */
  onProgress?: (stage: string, done: number, total: number) => void;
}

export const DEFAULT_RIG_SOLVE_OPTIONS: RigSolveOptions = Object.freeze({
  loss: 'huber',
  lossScaleSigmas: 2,
  outlierSigmas: OUTLIER_SIGMAS,
  maxRejectionRounds: 3,
  lm: {},
}) as RigSolveOptions;

export interface RejectedView {
  frame: string;
  camera: string;
  target: string;
  reason: string;
  status: View['status'];
}

export interface CameraResult {
  name: string;
  index: number;
  isReference: boolean;
  /** T_ref_cam: the camera in the reference camera's frame. */
  T_ref_cam: Pose;
  /** 6x6 covariance of the left perturbation of T_ref_cam, [rx ry rz tx ty tz], scaled by sigma0². */
  covariance: Float64Array;
  model: CameraModel;
  intrinsics: Float64Array;
  rmsPx: number;
  detectionsUsed: number;
  detectionsRejected: number;
  viewsUsed: number;
  viewsRejected: number;
}

export interface RigSolution {
  session: Session;
  reference: number;
  cameras: CameraResult[];
  /** Joint covariance of all camera extrinsics (6·numCameras square, row-major, scaled by sigma0²); the reference block is zero. */
  jointCovariance: Float64Array;
  sigma0: number;
  rmsPx: number;
  framesUsed: number;
  iterations: number;
  converged: boolean;
  /** The final least-squares solve. */
  summary: SolveSummary;
  /** All solves in order (robust, then each rejection round). */
  stages: { name: string; summary: SolveSummary }[];
  rejectedViews: RejectedView[];
  warnings: string[];
  /** Spanning tree used for initialisation: parent camera index per camera (-1 for the reference). */
  initParent: number[];
  /** Per detection: true when used in the final solve. */
  detectionUsed: Uint8Array;
  /** Per detection: final reprojection error (du, dv) in px, NaN when not evaluated. */
  residualsPx: Float64Array;
}

function median(a: Float64Array | number[]): number {
  const s = Float64Array.from(a).sort();
  if (s.length === 0) return NaN;
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : 0.5 * (s[m - 1]! + s[m]!);
}

interface BuiltProblem {
  problem: Problem;
  blocks: ViewResidual[];
  blockViews: View[];
  /** Rows (detection indices) of each block, aligned with its residuals. */
  blockRows: Int32Array[];
}

/** Solves the rig. Throws InputError / RigSolveError with actionable messages. */
export function solveRig(session: Session, opts: Partial<RigSolveOptions> = {}): RigSolution {
  const o: RigSolveOptions = { ...DEFAULT_RIG_SOLVE_OPTIONS, ...opts };
  const nc = session.cameras.length;
  const nt = session.targets.length;
  const names = session.cameras.map((c) => c.name);
  const reference = names.indexOf(session.referenceCamera);
  const models = session.cameras.map((c) => cameraModel(c.model));
  const intrinsics = session.cameras.map((c) => Float64Array.from(c.params));
  const warnings: string[] = [];

  // 1. Views and PnP.
  const views = groupViews(session);
  o.onProgress?.('pnp', 0, views.length);
  initialiseViewPoses(session, views, models, intrinsics);
  o.onProgress?.('pnp', views.length, views.length);

  // 2-3. View graph and spanning tree.
  const edges = buildViewGraph(views, nc, nt);
  const tree = spanningTree(edges, nc, reference, { R: Float64Array.from([1, 0, 0, 0, 1, 0, 0, 0, 1]), t: new Float64Array(3) });
  checkConnected(session, views, tree.groups, reference);
  for (let c = 0; c < nc; c++) {
    if (c !== reference && tree.support[c] === 1) {
      warnings.push(
        `camera ${names[c]} is linked to the rest of the rig by a single frame (through ${names[tree.parent[c]!]}): its extrinsic rests on one view; capture more frames in which ${names[c]} and a neighbouring camera see the target at once`,
      );
    }
  }
  const T_ref_cam = tree.T_ref_cam.map((T) => T!);

  // 4. Frame poses and whole-view consistency.
  const frameInit = initialiseFramePoses(views, nt, T_ref_cam, names);
  const framePoses = frameInit.poses;

  // Parameter storage shared by every problem we build (the engine updates it in place).
  const camValues = T_ref_cam.map((T) => poseToBlock(T));
  const frameValues = new Map<number, Float64Array>();
  for (const [k, T] of framePoses) frameValues.set(k, poseToBlock(T));

  const d = session.detections;
  const invSigma = new Float64Array(d.count);
  for (let i = 0; i < d.count; i++) {
    const s = Number.isNaN(d.sigma[i]!) ? session.cameras[d.camera[i]!]!.pixelSigma : d.sigma[i]!;
    invSigma[i] = 1 / s;
  }
  const rejectedRow = new Uint8Array(d.count);

  const build = (loss: LossFunction | undefined): BuiltProblem => {
    const problem = new Problem();
    const camIds = camValues.map((v, c) =>
      problem.addParameterBlock({ values: v, manifold: se3LeftManifold, constant: c === reference, label: `camera ${names[c]}` }),
    );
    const frameIds = new Map<number, number>();
    const blocks: ViewResidual[] = [];
    const blockViews: View[] = [];
    const blockRows: Int32Array[] = [];
    for (const view of views) {
      if (view.status !== 'used') continue;
      const key = frameTargetKey(view, nt);
      const fv = frameValues.get(key);
      if (!fv) continue;
      const rows = Int32Array.from(Array.from(view.rows).filter((r) => !rejectedRow[r]));
      const { points, pixels } = viewData(session, view, rows);
      const w = new Float64Array(rows.length);
      for (let k = 0; k < rows.length; k++) w[k] = invSigma[rows[k]!]!;
      const chain: ChainFactor[] = [
        { param: 0, sign: -1 },
        { param: 1, sign: 1 },
      ];
      const frameLabel = `frame ${session.frames[view.frame]} target ${session.targets[view.target]!.name}`;
      const block = new ViewResidual({
        model: models[view.camera]!,
        parameterBlocks: [camIds[view.camera]!, -1],
        chain,
        intrinsicsParam: -1,
        intrinsics: intrinsics[view.camera]!,
        points,
        pixels,
        invSigma: w,
        ...(loss ? { loss } : {}),
      });
      if (!block.evaluate([camValues[view.camera]!, fv], new Float64Array(block.numResiduals), null, null)) {
        // A point falls outside the camera model's valid region at the initial pose.
        view.status = 'unprojectable';
        view.reason = 'some of its points do not project into the camera at the initial pose (view at the edge of the valid field of view?)';
        continue;
      }
      let fid = frameIds.get(key);
      if (fid === undefined) {
        fid = problem.addParameterBlock({ values: fv, manifold: se3LeftManifold, eliminate: true, label: frameLabel });
        frameIds.set(key, fid);
      }
      (block.parameterBlocks as number[])[1] = fid;
      problem.addResidualBlock(block);
      blocks.push(block);
      blockViews.push(view);
      blockRows.push(rows);
    }
    return { problem, blocks, blockViews, blockRows };
  };

  const stages: { name: string; summary: SolveSummary }[] = [];
  const runStage = (name: string, built: BuiltProblem): SolveSummary => {
    const summary = solve(built.problem, {
      ...o.lm,
      ...(o.onIteration ? { onIteration: (r: IterationRecord) => o.onIteration!(name, r) } : {}),
    });
    stages.push({ name, summary });
    if (summary.termination === 'failure') {
      throw new RigSolveError('rig.solver_failed', `the joint solve failed in stage "${name}": ${summary.message}`);
    }
    return summary;
  };

  /** Whitened error norms of every detection in the built problem. */
  const errorNorms = (built: BuiltProblem): { rows: Int32Array; e: Float64Array }[] => {
    const out: { rows: Int32Array; e: Float64Array }[] = [];
    for (let b = 0; b < built.blocks.length; b++) {
      const block = built.blocks[b]!;
      const params = built.problem.residualParams(b);
      const r = new Float64Array(block.numResiduals);
      if (!block.evaluate(params, r, null, null)) r.fill(Infinity);
      const e = new Float64Array(r.length / 2);
      for (let k = 0; k < e.length; k++) e[k] = Math.hypot(r[2 * k]!, r[2 * k + 1]!);
      out.push({ rows: built.blockRows[b]!, e });
    }
    return out;
  };
  const robustSigma = (norms: { e: Float64Array }[]): number => {
    const all: number[] = [];
    for (const n of norms) for (const x of n.e) all.push(x * x);
    return Math.sqrt(median(all) / (2 * Math.LN2));
  };

  // 5. Robust solve, then reject and re-solve with plain least squares.
  let built = build(undefined);
  let sigmaHat = robustSigma(errorNorms(built));
  if (!Number.isFinite(sigmaHat)) throw new RigSolveError('rig.initialisation_failed', `the initial poses do not reproduce the detections (median reprojection error is not finite) → capture views in which the target covers a larger part of the image, and check the intrinsics`);
  if (o.loss !== 'none') {
    const a = o.lossScaleSigmas * Math.max(sigmaHat, 1e-6);
    built = build(o.loss === 'huber' ? huberLoss(a) : cauchyLoss(a));
    runStage(`robust (${o.loss})`, built);
  }
  let summary: SolveSummary | undefined;
  for (let round = 0; round <= o.maxRejectionRounds; round++) {
    const norms = errorNorms(built);
    sigmaHat = robustSigma(norms);
    const limit = o.outlierSigmas * sigmaHat;
    let newlyRejected = 0;
    for (let b = 0; b < norms.length; b++) {
      const { rows, e } = norms[b]!;
      const view = built.blockViews[b]!;
      let bad = 0;
      for (let k = 0; k < e.length; k++) if (!(e[k]! <= limit)) bad++;
      const remaining = view.rows.length - countRejected(view.rows, rejectedRow) - bad;
      if (bad > 0.5 * e.length || remaining < MIN_VIEW_POINTS) {
        view.status = 'too_many_outliers';
        view.reason = `${bad} of ${e.length} detections exceed ${o.outlierSigmas.toFixed(1)} robust sigmas after the joint solve`;
        newlyRejected++;
        continue;
      }
      for (let k = 0; k < e.length; k++) {
        if (!(e[k]! <= limit)) {
          rejectedRow[rows[k]!] = 1;
          newlyRejected++;
        }
      }
    }
    if (summary && newlyRejected === 0) break;
    checkConnected(session, views, connectedGroups(views, nc, nt, reference), reference);
    built = build(undefined);
    summary = runStage(round === 0 ? 'least squares' : `least squares (round ${round + 1})`, built);
  }
  const final = summary!;
  warnings.push(...captureWarnings(session, views));

  // 6. Covariance of the camera extrinsics, frame poses marginalised.
  const covResult = computeCovariance(built.problem);
  if (!covResult.ok) {
    throw new RigSolveError('rig.poorly_constrained', poorlyConstrainedMessage(covResult, session, views));
  }
  const cov = covResult.covariance;
  const sigma0 = Math.sqrt(cov.sigma0Squared);
  const s2 = cov.sigma0Squared;
  const joint = new Float64Array(36 * nc * nc);
  for (let a = 0; a < nc; a++) {
    for (let b = 0; b < nc; b++) {
      if (a === reference || b === reference) continue;
      const blk = cov.cross(a, b); // camera block ids equal camera indices (added first)
      for (let i = 0; i < 6; i++) for (let j = 0; j < 6; j++) joint[(6 * a + i) * 6 * nc + 6 * b + j] = s2 * blk[i * 6 + j]!;
    }
  }

  // 7. Per-camera statistics on the final problem.
  const residualsPx = new Float64Array(2 * d.count).fill(NaN);
  const detectionUsed = new Uint8Array(d.count);
  const sq = new Float64Array(nc);
  const used = new Int32Array(nc);
  for (let b = 0; b < built.blocks.length; b++) {
    const block = built.blocks[b]!;
    const rows = built.blockRows[b]!;
    const params = built.problem.residualParams(b);
    const r = new Float64Array(block.numResiduals);
    block.evaluate(params, r, null, null);
    const c = built.blockViews[b]!.camera;
    for (let k = 0; k < rows.length; k++) {
      const i = rows[k]!;
      const du = r[2 * k]! / invSigma[i]!;
      const dv = r[2 * k + 1]! / invSigma[i]!;
      residualsPx[2 * i] = du;
      residualsPx[2 * i + 1] = dv;
      detectionUsed[i] = 1;
      sq[c]! += du * du + dv * dv;
      used[c]!++;
    }
  }
  const detPerCam = new Int32Array(nc);
  for (let i = 0; i < d.count; i++) detPerCam[d.camera[i]!]!++;
  const cameras: CameraResult[] = names.map((name, c) => {
    const covariance = new Float64Array(36);
    for (let i = 0; i < 6; i++) for (let j = 0; j < 6; j++) covariance[i * 6 + j] = joint[(6 * c + i) * 6 * nc + 6 * c + j]!;
    const camViews = views.filter((v) => v.camera === c);
    return {
      name,
      index: c,
      isReference: c === reference,
      T_ref_cam: poseFromBlock(camValues[c]!),
      covariance,
      model: models[c]!,
      intrinsics: intrinsics[c]!,
      rmsPx: used[c]! > 0 ? Math.sqrt(sq[c]! / used[c]!) : NaN,
      detectionsUsed: used[c]!,
      detectionsRejected: detPerCam[c]! - used[c]!,
      viewsUsed: camViews.filter((v) => v.status === 'used').length,
      viewsRejected: camViews.filter((v) => v.status !== 'used').length,
    };
  });
  let totalSq = 0;
  let totalUsed = 0;
  for (let c = 0; c < nc; c++) {
    totalSq += sq[c]!;
    totalUsed += used[c]!;
  }
  const framesUsed = new Set(views.filter((v) => v.status === 'used').map((v) => v.frame)).size;
  const rejectedViews: RejectedView[] = views
    .filter((v) => v.status !== 'used')
    .map((v) => ({
      frame: session.frames[v.frame]!,
      camera: names[v.camera]!,
      target: session.targets[v.target]!.name,
      reason: v.reason ?? v.status,
      status: v.status,
    }));
  return {
    session,
    reference,
    cameras,
    jointCovariance: joint,
    sigma0,
    rmsPx: totalUsed > 0 ? Math.sqrt(totalSq / totalUsed) : NaN,
    framesUsed,
    iterations: stages.reduce((s, st) => s + st.summary.iterations.length, 0),
    converged: final.termination === 'converged',
    summary: final,
    stages,
    rejectedViews,
    warnings,
    initParent: tree.parent,
    detectionUsed,
    residualsPx,
  };
}

function countRejected(rows: Int32Array, rejected: Uint8Array): number {
  let n = 0;
  for (const r of rows) n += rejected[r]!;
  return n;
}

/** Connected camera groups over the views still in use. */
function connectedGroups(views: View[], nc: number, nt: number, reference: number): number[][] {
  const parent = Array.from({ length: nc }, (_, i) => i);
  const find = (x: number): number => (parent[x] === x ? x : (parent[x] = find(parent[x]!)));
  const byKey = new Map<number, number>();
  for (const v of views) {
    if (v.status !== 'used') continue;
    const k = frameTargetKey(v, nt);
    const other = byKey.get(k);
    if (other === undefined) byKey.set(k, v.camera);
    else parent[find(v.camera)] = find(other);
  }
  const groups = new Map<number, number[]>();
  for (let c = 0; c < nc; c++) {
    const r = find(c);
    let g = groups.get(r);
    if (!g) groups.set(r, (g = []));
    g.push(c);
  }
  const list = [...groups.values()];
  list.sort((a, b) => (a.includes(reference) ? -1 : b.includes(reference) ? 1 : a[0]! - b[0]!));
  return list;
}

/** Throws a RigSolveError naming the groups and what to capture when the cameras are not all linked. */
function checkConnected(session: Session, views: View[], groups: number[][], reference: number): void {
  const names = session.cameras.map((c) => c.name);
  const withViews = new Set(views.filter((v) => v.status === 'used').map((v) => v.camera));
  const noViews = names.filter((_, c) => !withViews.has(c));
  if (noViews.length > 0) {
    throw new RigSolveError(
      'rig.camera_without_views',
      `no usable views for camera${noViews.length > 1 ? 's' : ''} ${noViews.join(', ')}: every view was set aside (too few points, PnP failure or outliers); capture frames in which ${noViews.length > 1 ? 'they see' : 'it sees'} the whole target sharply`,
    );
  }
  if (groups.length <= 1) return;
  const fmt = (g: number[]) => `{${g.map((c) => names[c]).join(', ')}}`;
  const refGroup = groups.find((g) => g.includes(reference))!;
  const others = groups.filter((g) => g !== refGroup);
  const parts = others.map((g) => `no frame links ${fmt(g)} to ${fmt(refGroup)}`);
  throw new RigSolveError(
    'rig.disconnected',
    `${parts.join('; ')}: capture views in which a camera of each group sees the target at once`,
  );
}

/**
 * Covariance of the relative transform T_a_b = T_ref_a⁻¹ T_ref_b between any two
 * cameras, as the left perturbation of T_a_b in a's frame:
 * δ_ab = Ad(T_a_ref) (δ_b − δ_a), so Σ_ab = Ad (Σ_bb − Σ_ba − Σ_ab + Σ_aa) Adᵀ.
 */
export function relativeCovariance(solution: RigSolution, a: number, b: number): Float64Array {
  const nc = solution.cameras.length;
  const J = solution.jointCovariance;
  const S = new Float64Array(36);
  for (let i = 0; i < 6; i++) {
    for (let j = 0; j < 6; j++) {
      const aa = J[(6 * a + i) * 6 * nc + 6 * a + j]!;
      const bb = J[(6 * b + i) * 6 * nc + 6 * b + j]!;
      const ab = J[(6 * a + i) * 6 * nc + 6 * b + j]!;
      const ba = J[(6 * b + i) * 6 * nc + 6 * a + j]!;
      S[i * 6 + j] = bb - ba - ab + aa;
    }
  }
  const Ad = adjoint(inverse(solution.cameras[a]!.T_ref_cam));
  const tmp = new Float64Array(36);
  const out = new Float64Array(36);
  for (let i = 0; i < 6; i++) for (let j = 0; j < 6; j++) {
    let s = 0;
    for (let k = 0; k < 6; k++) s += Ad[i * 6 + k]! * S[k * 6 + j]!;
    tmp[i * 6 + j] = s;
  }
  for (let i = 0; i < 6; i++) for (let j = 0; j < 6; j++) {
    let s = 0;
    for (let k = 0; k < 6; k++) s += tmp[i * 6 + k]! * Ad[j * 6 + k]!;
    out[i * 6 + j] = s;
  }
  return out;
}

export { poseClone };

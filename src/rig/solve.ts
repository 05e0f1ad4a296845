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
import { adjoint, compose, inverse, poseClone, poseIdentity, se3LeftManifold, type Pose } from '../geometry/se3.js';
import { averagePosesRobust } from './average.js';
import { initialiseFixedScene } from './initialise-fixed.js';
import { PriorResidual } from './prior.js';
import { designPoses, mergeGroupsCoveredByPrior } from './design.js';
import { checkConnected, checkFixedScenePlaced, connectedGroups } from './connectivity.js';
import type { RigDescription } from './description.js';
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
  consensusPoses,
  frameTargetKey,
  groupByFrameTarget,
  fitViewPose,
  initialiseFramePoses,
  initialiseViewPoses,
  pnpOutlierLimit,
  spanningTree,
} from './initialise.js';
import { poseFromBlock, poseToBlock, ViewResidual, type ChainFactor } from './view-residual.js';
import { cameraUsage, groupViews, viewData, type View } from './views.js';
import { fixedIntrinsicIndices, initialiseIntrinsics, intrinsicsWarnings } from './intrinsics.js';
import { captureWarnings, poorlyConstrainedMessage } from './diagnostics.js';

/**
 * LM settings of the robust stage (o.lm overrides them). That stage only has
 * to bring the residuals close enough to their final values for the outlier
 * test (a threshold of 3.7 robust sigmas) and to start the least-squares
 * stage, which keeps the engine's tight default tolerances and refines
 * everything again. A relative cost decrease below 1e-4 per step (e.g. 15 in
 * a cost of 1.5e5, i.e. parameter changes far below their 1-sigma
 * uncertainty) is therefore enough there.
 */
export const ROBUST_STAGE_LM: Partial<LmOptions> = Object.freeze({ functionTolerance: 1e-4 });

/** sqrt of the 99.9 % quantile of χ² with 2 degrees of freedom: sqrt(−2 ln 0.001). */
export const OUTLIER_SIGMAS = Math.sqrt(-2 * Math.log(0.001));

/** Smallest robust scale used for rejection, in whitened units (a thousandth of the stated pixel sigma). */
export const MIN_ROBUST_SIGMA = 1e-3;

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
  /**
   * Design prior: a rig description whose cameras carry sigma_position_mm and
   * sigma_rotation_deg. Used to place cameras the view graph cannot reach and
   * as Gaussian prior residuals in the joint solve.
   */
  prior?: RigDescription;
  /** Iteration log: stage name and the engine's record. */
  onIteration?: (stage: string, record: IterationRecord) => void;
  /** Progress of long stages (PnP over many views). */
  onProgress?: (stage: string, done: number, total: number) => void;
  /**
   * Hold every camera at the given T_ref_cam (keyed by camera name; every
   * session camera must be present): only frame poses (and, for
   * fixed_targets, target poses) are solved. In this mode the view graph is
   * not needed (no connectivity requirement), moving_targets views are not
   * set aside for disagreeing with the other cameras of their frame (that
   * disagreement is what a moved camera looks like), the outlier scale σ̂ is
   * taken per camera (so a camera whose every residual grew keeps its
   * detections while isolated gross detections are still rejected), design
   * priors are ignored, camera covariances are zero (not computed) and
   * sigma0 is computed from the residuals with n = the free tangent coordinates.
   */
  fixedExtrinsics?: Map<string, Pose>;
}

export const DEFAULT_RIG_SOLVE_OPTIONS: RigSolveOptions = Object.freeze({
  loss: 'huber',
  lossScaleSigmas: 2,
  outlierSigmas: OUTLIER_SIGMAS,
  maxRejectionRounds: 3,
  lm: {},
}) as RigSolveOptions;

/**
 * The RigSolution fields every way of producing one computes alike (solve here, fixed-extrinsics
 * evaluation in evaluate.ts): RMS over the detections used, frames used, LM stages and iterations
 * (the summary is the last stage's), and the views set aside by frame, camera and target.
 */
export function solutionFigures(
  session: Session,
  views: readonly View[],
  names: readonly string[],
  stages: { name: string; summary: SolveSummary }[],
  totalSq: number,
  totalUsed: number,
): Pick<RigSolution, 'rmsPx' | 'framesUsed' | 'iterations' | 'converged' | 'summary' | 'stages' | 'rejectedViews'> {
  const final = stages[stages.length - 1]!.summary;
  return {
    rmsPx: totalUsed > 0 ? Math.sqrt(totalSq / totalUsed) : NaN,
    framesUsed: new Set(views.filter((v) => v.status === 'used').map((v) => v.frame)).size,
    iterations: stages.reduce((s, st) => s + st.summary.iterations.length, 0),
    converged: final.termination === 'converged',
    summary: final,
    stages,
    rejectedViews: views
      .filter((v) => v.status !== 'used')
      .map((v) => ({ frame: session.frames[v.frame]!, camera: names[v.camera]!, target: session.targets[v.target]!.name, reason: v.reason ?? v.status, status: v.status })),
  };
}

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
  /** With a design prior: whitened distance of the solved pose from the design (how many sigmas the data moved it). */
  sigmasFromDesign?: number;
  /** True when the intrinsics were refined in the joint solve. */
  intrinsicsSolved: boolean;
  /** Covariance of the intrinsics (numParams square, row-major, scaled by sigma0²), or null when held fixed. */
  intrinsicsCovariance: Float64Array | null;
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
  /**
   * moving_targets: T_ref_target per (frame, target) with a used view, keyed `${frame}\u0000${target}`;
   * fixed_targets: T_origin_ref (the rig pose) per frame, keyed by the frame id.
   */
  framePoses: Map<string, Pose>;
  /** fixed_targets: each target's pose in the scene (the first target is the origin), covariance scaled by sigma0²; empty otherwise. */
  targets: { name: string; T_origin_target: Pose; covariance: Float64Array }[];
  /** Per detection: true when used in the final solve. */
  detectionUsed: Uint8Array;
  /** Per detection: final reprojection error (du, dv) in px, NaN when not evaluated. */
  residualsPx: Float64Array;
}

function median(a: Float64Array | number[]): number {
  const s = new Float64Array(a);
  const n = s.length;
  if (n === 0) return NaN;
  const m = n >> 1;
  for (let i = 0; i < n; i++) {
    if (Number.isNaN(s[i]!)) {
      s.sort();
      return n % 2 ? s[m]! : 0.5 * (s[m - 1]! + s[m]!);
    }
  }
  // Selection (Hoare's quickselect) instead of a full sort: s[m] is the m-th smallest, s[0..m) ≤ s[m].
  const hi = selectKth(s, m);
  if (n % 2) return hi;
  let lo = -Infinity;
  for (let i = 0; i < m; i++) if (s[i]! > lo) lo = s[i]!;
  return 0.5 * (lo + hi);
}

/** Rearranges s so that s[k] is its k-th smallest value (0-based), smaller values before it; returns s[k]. */
function selectKth(s: Float64Array, k: number): number {
  let left = 0;
  let right = s.length - 1;
  while (right > left) {
    // Median of three as the pivot.
    const mid = (left + right) >> 1;
    const a = s[left]!, b = s[mid]!, c = s[right]!;
    const pivot = a < b ? (b < c ? b : a < c ? c : a) : a < c ? a : b < c ? c : b;
    let i = left;
    let j = right;
    while (i <= j) {
      while (s[i]! < pivot) i++;
      while (s[j]! > pivot) j--;
      if (i <= j) {
        const t = s[i]!;
        s[i] = s[j]!;
        s[j] = t;
        i++;
        j--;
      }
    }
    if (k <= j) right = j;
    else if (k >= i) left = i;
    else break;
  }
  return s[k]!;
}

interface BuiltProblem {
  problem: Problem;
  blocks: ViewResidual[];
  blockViews: View[];
  /** Rows (detection indices) of each block, aligned with its residuals. */
  blockRows: Int32Array[];
  /** Residual block id of each view block in the problem. */
  blockIds: number[];
  /** Parameter block id of each camera's intrinsics, or -1 when they are held fixed. */
  intrIds: number[];
  /** fixed_targets: parameter block id of each target pose (the first is constant). */
  targetIds: number[];
}

/** Solves the rig. Throws InputError / RigSolveError with actionable messages. */
export function solveRig(session: Session, opts: Partial<RigSolveOptions> = {}): RigSolution {
  const o: RigSolveOptions = { ...DEFAULT_RIG_SOLVE_OPTIONS, ...opts };
  const nc = session.cameras.length;
  const nt = session.targets.length;
  const names = session.cameras.map((c) => c.name);
  const reference = names.indexOf(session.referenceCamera);
  const models = session.cameras.map((c) => cameraModel(c.model));
  const intrinsics: Float64Array[] = session.cameras.map((c) => Float64Array.from(c.params));
  const warnings: string[] = [];
  const solvesIntrinsics = session.cameras.map((c) => c.solveIntrinsics);
  const design = o.prior ? designPoses(o.prior, session, warnings) : names.map(() => null);

  // 1. Views, intrinsics not given in the session (Zhang's method), PnP.
  const views = groupViews(session);
  session.cameras.forEach((cam, c) => {
    if (!cam.intrinsicsGiven) {
      intrinsics[c] = initialiseIntrinsics(session, views, c);
    }
  });
  o.onProgress?.('pnp', 0, views.length);
  const pnpOutcome = initialiseViewPoses(session, views, models, intrinsics, o.onProgress ? (done, total) => o.onProgress!('pnp', done, total) : undefined);
  o.onProgress?.('pnp', views.length, views.length);

  // 2-4. Camera extrinsics over the view graph, then frame (and target) poses
  // with whole-view consistency.
  const fixedScene = session.scene === 'fixed_targets';
  /** Key of the eliminated pose a view depends on: (frame, target) for moving targets, the frame for fixed targets. */
  const poseKey = (v: View): number => (fixedScene ? v.frame : frameTargetKey(v, nt));
  let T_ref_cam: Pose[];
  let initParent: number[];
  const targetValues: Float64Array[] = [];
  const frameValues = new Map<number, Float64Array>();
  const fixed = o.fixedExtrinsics;
  if (!fixedScene && fixed) {
    T_ref_cam = fixedCameraPoses(names, fixed);
    initParent = names.map(() => -1);
    for (const [k, T] of initialiseFramePosesAllViews(views, nt, T_ref_cam)) frameValues.set(k, poseToBlock(T));
  } else if (!fixedScene) {
    const edges = buildViewGraph(views, nc, nt);
    const tree = spanningTree(edges, nc, reference, poseIdentity());
    // Cameras the view graph cannot reach are placed at their design pose when the prior has one.
    for (let c = 0; c < nc; c++) {
      if (!tree.T_ref_cam[c] && design[c]) {
        tree.T_ref_cam[c] = design[c]!.T;
        warnings.push(
          `camera ${names[c]} shares no frame with the rest of the rig: its extrinsic comes from the design prior alone (±${(design[c]!.sigmaPositionM * 1000).toFixed(1)} mm, ±${((design[c]!.sigmaRotationRad * 180) / Math.PI).toFixed(2)}°); capture frames in which it and a neighbouring camera see the target at once`,
        );
      }
    }
    checkConnected(session, views, mergeGroupsCoveredByPrior(tree.groups, reference, design), reference);
    // Frames in which each camera shares a target with another camera (all edges, not just the tree's).
    const linkFrames = names.map(() => new Set<number>());
    for (const group of groupByFrameTarget(views, nt).values()) {
      if (group.length < 2) continue;
      for (const v of group) linkFrames[v.camera]!.add(v.frame);
    }
    for (let c = 0; c < nc; c++) {
      if (c !== reference && tree.parent[c]! >= 0 && linkFrames[c]!.size === 1) {
        warnings.push(
          `camera ${names[c]} is linked to the rest of the rig by a single frame (through ${names[tree.parent[c]!]}): its extrinsic rests on one view; capture more frames in which ${names[c]} and a neighbouring camera see the target at once`,
        );
      }
    }
    T_ref_cam = tree.T_ref_cam.map((T) => T!);
    initParent = tree.parent;
    const frameInit = initialiseFramePoses(views, nt, T_ref_cam, names);
    for (const [k, T] of frameInit.poses) frameValues.set(k, poseToBlock(T));
  } else {
    const init = initialiseFixedScene(views, nc, nt, reference);
    checkFixedScenePlaced(session, views, init.T_ref_cam, init.T_origin_target);
    T_ref_cam = fixed ? fixedCameraPoses(names, fixed) : init.T_ref_cam.map((T) => T!);
    initParent = fixed ? names.map(() => -1) : init.cameraParent;
    init.T_origin_target.forEach((T) => targetValues.push(poseToBlock(T!)));
    const byFrame = new Map<number, View[]>();
    for (const v of views) {
      if (v.status !== 'used') continue;
      let g = byFrame.get(v.frame);
      if (!g) byFrame.set(v.frame, (g = []));
      g.push(v);
    }
    // Each view proposes the rig pose T_origin_ref = T_origin_target · T_cam_target⁻¹ · T_ref_cam⁻¹.
    const frameInit = consensusPoses(
      byFrame,
      (v) => compose(init.T_origin_target[v.target]!, inverse(compose(T_ref_cam[v.camera]!, v.T_cam_target!))),
      names,
    );
    for (const [k, T] of frameInit.poses) frameValues.set(k, poseToBlock(T));
  }

  // Parameter storage shared by every problem we build (the engine updates it in place).
  const camValues = T_ref_cam.map((T) => poseToBlock(T));
  const priorBlocks: (PriorResidual | null)[] = names.map(() => null);

  const d = session.detections;
  const invSigma = new Float64Array(d.count);
  for (let i = 0; i < d.count; i++) {
    const s = Number.isNaN(d.sigma[i]!) ? session.cameras[d.camera[i]!]!.pixelSigma : d.sigma[i]!;
    invSigma[i] = 1 / s;
  }
  const rejectedRow = new Uint8Array(d.count);

  const viewCache = new Map<View, { rows: Int32Array; points: Float64Array; pixels: Float64Array; w: Float64Array; rejected: number; validated: boolean }>();
  const initialSquaredErrors: number[] = [];
  /** A view's detections that are not rejected, with their points, pixels and weights; rebuilt only when more were rejected since. */
  const currentViewData = (view: View) => {
    let data = viewCache.get(view);
    const viewRows = view.rows;
    let rejectedNow = 0;
    for (let k = 0; k < viewRows.length; k++) rejectedNow += rejectedRow[viewRows[k]!]!;
    if (!data || data.rejected !== rejectedNow) {
      const rows = new Int32Array(viewRows.length - rejectedNow);
      for (let k = 0, at = 0; k < viewRows.length; k++) if (!rejectedRow[viewRows[k]!]) rows[at++] = viewRows[k]!;
      const { points, pixels } = viewData(session, view, rows);
      const w = new Float64Array(rows.length);
      for (let k = 0; k < rows.length; k++) w[k] = invSigma[rows[k]!]!;
      data = { rows, points, pixels, w, rejected: rejectedNow, validated: data?.validated ?? false };
      viewCache.set(view, data);
    }
    return data;
  };
  const build = (loss: LossFunction | undefined): BuiltProblem => {
    const problem = new Problem();
    const camIds = camValues.map((v, c) =>
      problem.addParameterBlock({ values: v, manifold: se3LeftManifold, constant: c === reference || fixed !== undefined, label: `camera ${names[c]}` }),
    );
    const intrIds = intrinsics.map((v, c) =>
      solvesIntrinsics[c]
        ? problem.addParameterBlock({
            values: v,
            fixedTangentIndices: fixedIntrinsicIndices(session.cameras[c]!.fixedIntrinsics, models[c]!.paramNames),
            label: `intrinsics ${names[c]}`,
          })
        : -1,
    );
    design.forEach((dsg, c) => {
      if (!dsg || c === reference || fixed) return;
      const prior = new PriorResidual(camIds[c]!, dsg.T, dsg.sigmaRotationRad, dsg.sigmaPositionM);
      problem.addResidualBlock(prior);
      priorBlocks[c] = prior;
    });
    const targetIds = targetValues.map((v, t) =>
      problem.addParameterBlock({ values: v, manifold: se3LeftManifold, constant: t === 0, label: `target ${session.targets[t]!.name}` }),
    );
    const frameIds = new Map<number, number>();
    const blocks: ViewResidual[] = [];
    const blockViews: View[] = [];
    const blockRows: Int32Array[] = [];
    const blockIds: number[] = [];
    for (const view of views) {
      if (view.status !== 'used') continue;
      const key = poseKey(view);
      const fv = frameValues.get(key);
      if (!fv) continue;
      const data = currentViewData(view);
      const { rows, points, pixels, w } = data;
      // moving targets: T_cam_target = T_ref_cam⁻¹ · T_ref_target(frame, target)
      // fixed targets:  T_cam_target = T_ref_cam⁻¹ · T_origin_ref(frame)⁻¹ · T_origin_target
      const chain: ChainFactor[] = fixedScene
        ? [
            { param: 0, sign: -1 },
            { param: 1, sign: -1 },
            { param: 2, sign: 1 },
          ]
        : [
            { param: 0, sign: -1 },
            { param: 1, sign: 1 },
          ];
      const poseParams = fixedScene ? [camIds[view.camera]!, -1, targetIds[view.target]!] : [camIds[view.camera]!, -1];
      const poseValues = fixedScene ? [camValues[view.camera]!, fv, targetValues[view.target]!] : [camValues[view.camera]!, fv];
      const frameLabel = fixedScene
        ? `rig pose in frame ${session.frames[view.frame]}`
        : `frame ${session.frames[view.frame]} target ${session.targets[view.target]!.name}`;
      const withIntr = intrIds[view.camera]! >= 0;
      const block = new ViewResidual({
        model: models[view.camera]!,
        parameterBlocks: withIntr ? [...poseParams, intrIds[view.camera]!] : poseParams,
        chain,
        intrinsicsParam: withIntr ? poseParams.length : -1,
        intrinsics: intrinsics[view.camera]!,
        points,
        pixels,
        invSigma: w,
        ...(loss ? { loss } : {}),
      });
      if (!data.validated) {
        const r = new Float64Array(block.numResiduals);
        if (!block.evaluate([...poseValues, intrinsics[view.camera]!], r, null, null)) {
          // A point falls outside the camera model's valid region at the initial pose.
          view.status = 'unprojectable';
          view.reason = 'some of its points do not project into the camera at the initial pose (view at the edge of the valid field of view?)';
          continue;
        }
        data.validated = true;
        for (let k = 0; k < r.length; k += 2) initialSquaredErrors.push(r[k]! * r[k]! + r[k + 1]! * r[k + 1]!);
      }
      let fid = frameIds.get(key);
      if (fid === undefined) {
        fid = problem.addParameterBlock({ values: fv, manifold: se3LeftManifold, eliminate: true, label: frameLabel });
        frameIds.set(key, fid);
      }
      (block.parameterBlocks as number[])[1] = fid;
      blockIds.push(problem.addResidualBlock(block));
      blocks.push(block);
      blockViews.push(view);
      blockRows.push(rows);
    }
    return { problem, blocks, blockViews, blockRows, blockIds, intrIds, targetIds };
  };

  /**
   * The problem for the next least-squares solve. When the same views are in
   * use as in `prev` (no view dropped or re-admitted), prev is updated in
   * place: views that lost detections get their remaining ones
   * (setDetections + residualSizesChanged), and the robust loss is removed.
   * The engine's layout and buffers are then reused instead of rebuilt. The
   * result is the same problem a fresh build() would give.
   */
  const reuseOrBuild = (prev: BuiltProblem): BuiltProblem => {
    let inUse = 0;
    for (const view of views) if (view.status === 'used' && frameValues.has(poseKey(view))) inUse++;
    if (inUse !== prev.blockViews.length || prev.blockViews.some((v) => v.status !== 'used')) return build(undefined);
    let resized = false;
    for (let b = 0; b < prev.blocks.length; b++) {
      const block = prev.blocks[b]!;
      const data = currentViewData(prev.blockViews[b]!);
      if (data.rows !== prev.blockRows[b]) {
        block.setDetections(data.points, data.pixels, data.w);
        prev.blockRows[b] = data.rows;
        resized = true;
      }
      block.setLoss(undefined);
    }
    if (resized) prev.problem.residualSizesChanged();
    return prev;
  };

  const stages: { name: string; summary: SolveSummary }[] = [];
  const runStage = (name: string, built: BuiltProblem, stageLm: Partial<LmOptions> = {}): SolveSummary => {
    const summary = solve(built.problem, {
      ...stageLm,
      ...o.lm,
      ...(o.onIteration ? { onIteration: (r: IterationRecord) => o.onIteration!(name, r) } : {}),
    });
    stages.push({ name, summary });
    if (summary.termination === 'failure') {
      throw new RigSolveError(
        'rig.solver_failed',
        `the joint solve failed in stage "${name}" (${summary.message}) → check the camera models and intrinsics in the session, ` +
          'and that point ids follow the target (a wrong model or mislabelled detections can leave no step that lowers the error)',
      );
    }
    return summary;
  };

  /** Whitened error norms of every detection in the built problem. */
  const errorNorms = (built: BuiltProblem): { rows: Int32Array; e: Float64Array }[] => {
    const out: { rows: Int32Array; e: Float64Array }[] = [];
    let r = new Float64Array(0);
    for (let b = 0; b < built.blocks.length; b++) {
      const block = built.blocks[b]!;
      const params = built.problem.residualParams(built.blockIds[b]!);
      const m = block.numResiduals;
      if (r.length < m) r = new Float64Array(2 * m);
      const e = new Float64Array(m / 2);
      if (!block.evaluate(params, r, null, null)) e.fill(Infinity);
      else for (let k = 0; k < e.length; k++) e[k] = Math.sqrt(r[2 * k]! * r[2 * k]! + r[2 * k + 1]! * r[2 * k + 1]!);
      out.push({ rows: built.blockRows[b]!, e });
    }
    return out;
  };
  const robustSigma = (norms: { e: Float64Array }[]): number => {
    let total = 0;
    for (const n of norms) total += n.e.length;
    const all = new Float64Array(total);
    let at = 0;
    for (const n of norms) for (let k = 0; k < n.e.length; k++) all[at++] = n.e[k]! * n.e[k]!;
    // Floor: with (nearly) noise-free detections the scale collapses to round-off,
    // and nothing should be rejected for errors of a thousandth of the stated sigma.
    return Math.max(Math.sqrt(median(all) / (2 * Math.LN2)), MIN_ROBUST_SIGMA);
  };
  /** Fixed extrinsics: σ̂ per camera (see RigSolveOptions.fixedExtrinsics); otherwise one σ̂ for all. */
  const rejectionLimits = (built: BuiltProblem, norms: { e: Float64Array }[]): Float64Array => {
    const limits = new Float64Array(nc).fill(o.outlierSigmas * robustSigma(norms));
    if (!fixed) return limits;
    for (let c = 0; c < nc; c++) {
      const own = norms.filter((_, b) => built.blockViews[b]!.camera === c);
      if (own.length) limits[c] = o.outlierSigmas * robustSigma(own);
    }
    return limits;
  };

  // 5. Robust solve, then reject and re-solve with plain least squares.
  let built = build(undefined);
  // Robust scale of the initial whitened errors (collected while building), for the loss scale.
  const sigmaHat = Math.sqrt(median(initialSquaredErrors) / (2 * Math.LN2));
  initialSquaredErrors.length = 0;
  if (!Number.isFinite(sigmaHat)) {
    throw new RigSolveError(
      'rig.initialisation_failed',
      'the initial poses do not reproduce the detections (median reprojection error is not finite) → capture views in which the target covers a larger part of the image, and check the intrinsics',
    );
  }
  if (o.loss !== 'none') {
    const a = o.lossScaleSigmas * Math.max(sigmaHat, 1e-6);
    // The problem just built is reused with the loss set on its view blocks (the engine reads it at evaluation).
    const loss = o.loss === 'huber' ? huberLoss(a) : cauchyLoss(a);
    for (const block of built.blocks) block.setLoss(loss);
    runStage(`robust (${o.loss})`, built, ROBUST_STAGE_LM);
    // Views set aside for a high PnP error while their camera's intrinsics were still the
    // initial estimates get a second chance with the refined ones (corner views matter most
    // for intrinsics, and they suffer most from a rough initial distortion).
    const limit = pnpOutlierLimit(pnpOutcome.medianRmsPx);
    for (const view of views) {
      if (view.status !== 'pnp_outlier' || !solvesIntrinsics[view.camera]) continue;
      const reason = view.reason;
      view.status = 'used';
      const c = view.camera;
      const key = poseKey(view);
      const fitted = fitViewPose(session, view, models[c]!, intrinsics[c]!) && view.pnpRmsPx! <= limit;
      if (fitted && !frameValues.has(key) && !fixedScene) {
        frameValues.set(key, poseToBlock(compose(poseFromBlock(camValues[c]!), view.T_cam_target!)));
      }
      if (!fitted || !frameValues.has(key)) {
        if (view.status === 'used') {
          view.status = 'pnp_outlier';
          if (reason !== undefined) view.reason = reason;
        }
      }
    }
  }
  let summary: SolveSummary | undefined;
  for (let round = 0; round <= o.maxRejectionRounds; round++) {
    const norms = errorNorms(built);
    const limits = rejectionLimits(built, norms);
    let newlyRejected = 0;
    for (let b = 0; b < norms.length; b++) {
      const { rows, e } = norms[b]!;
      const view = built.blockViews[b]!;
      const limit = limits[view.camera]!;
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
    if (!fixed) checkConnected(session, views, mergeGroupsCoveredByPrior(connectedGroups(views, nc, poseKey, reference), reference, design), reference);
    built = reuseOrBuild(built);
    summary = runStage(round === 0 ? 'least squares' : `least squares (round ${round + 1})`, built);
  }
  warnings.push(...captureWarnings(session, views));

  // 6. Covariance of the camera extrinsics, frame poses marginalised (not needed when all are held fixed).
  const covResult = fixed ? undefined : computeCovariance(built.problem);
  if (covResult && !covResult.ok) {
    throw new RigSolveError('rig.poorly_constrained', poorlyConstrainedMessage(covResult, session, views));
  }
  const cov = covResult?.ok ? covResult.covariance : undefined;
  let sigma0 = cov ? Math.sqrt(cov.sigma0Squared) : NaN;
  const s2 = cov ? cov.sigma0Squared : 0;
  const joint = new Float64Array(36 * nc * nc);
  for (let a = 0; a < nc && cov; a++) {
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
    const params = built.problem.residualParams(built.blockIds[b]!);
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
    const intrId = built.intrIds[c]!;
    const intrinsicsCovariance = intrId >= 0 && cov ? cov.block(intrId).map((x) => x * s2) : null;
    const prior = priorBlocks[c];
    return {
      ...(prior ? { sigmasFromDesign: prior.sigmasFromDesign(camValues[c]!) } : {}),
      intrinsicsCovariance,
      intrinsicsSolved: intrId >= 0,
      name,
      index: c,
      isReference: c === reference,
      T_ref_cam: poseFromBlock(camValues[c]!),
      covariance,
      model: models[c]!,
      intrinsics: intrinsics[c]!,
      ...cameraUsage(views, c, sq[c]!, used[c]!, detPerCam[c]!),
    };
  });
  for (const cam of cameras) warnings.push(...intrinsicsWarnings(cam, session.cameras[cam.index]!.resolution));
  if (fixed) {
    // sigma0² = Σ whitened r² / (m − n), n = free tangent coordinates (frame, target and intrinsic blocks).
    let whitened = 0;
    let m = 0;
    for (let i = 0; i < d.count; i++) {
      if (!detectionUsed[i]) continue;
      whitened += (residualsPx[2 * i]! ** 2 + residualsPx[2 * i + 1]! ** 2) * invSigma[i]! ** 2;
      m += 2;
    }
    let n = 0;
    for (let id = 0; id < built.problem.numParameterBlocks; id++) {
      const pb = built.problem.parameterBlock(id);
      if (!pb.constant) n += pb.tangentSize - pb.fixedTangentIndices.length;
    }
    sigma0 = m > n ? Math.sqrt(whitened / (m - n)) : NaN;
  }
  let totalSq = 0;
  let totalUsed = 0;
  for (let c = 0; c < nc; c++) {
    totalSq += sq[c]!;
    totalUsed += used[c]!;
  }
  const usedKeys = new Set(views.filter((v) => v.status === 'used').map(poseKey));
  return {
    session,
    reference,
    cameras,
    jointCovariance: joint,
    sigma0,
    ...solutionFigures(session, views, names, stages, totalSq, totalUsed),
    warnings,
    initParent,
    targets: targetValues.map((v, t) => ({
      name: session.targets[t]!.name,
      T_origin_target: poseFromBlock(v),
      covariance: t === 0 || !cov ? new Float64Array(36) : cov.block(built.targetIds[t]!).map((x) => x * s2),
    })),
    framePoses: new Map(
      [...frameValues].filter(([key]) => usedKeys.has(key)).map(([key, v]) => [
        fixedScene ? session.frames[key]! : `${session.frames[Math.floor(key / nt)]}\u0000${session.targets[key % nt]!.name}`,
        poseFromBlock(v),
      ]),
    ),
    detectionUsed,
    residualsPx,
  };
}

/** The given extrinsics in camera order; throws naming any camera without one. */
function fixedCameraPoses(names: string[], fixed: Map<string, Pose>): Pose[] {
  const missing = names.filter((n) => !fixed.has(n));
  if (missing.length) {
    throw new RigSolveError('rig.fixed_extrinsics_missing', `no fixed extrinsic given for camera${missing.length > 1 ? 's' : ''} ${missing.join(', ')}`);
  }
  return names.map((n) => poseClone(fixed.get(n)!));
}

/**
 * Fixed-extrinsics initialisation (moving targets): T_ref_target per
 * (frame, target) as the robust average of every view's estimate; no view is
 * set aside.
 */
function initialiseFramePosesAllViews(views: View[], nt: number, T_ref_cam: Pose[]): Map<number, Pose> {
  const poses = new Map<number, Pose>();
  for (const [key, group] of groupByFrameTarget(views, nt)) {
    const candidates = group.map((v) => compose(T_ref_cam[v.camera]!, v.T_cam_target!));
    poses.set(key, candidates.length === 1 ? candidates[0]! : averagePosesRobust(candidates).pose);
  }
  return poses;
}

function countRejected(rows: Int32Array, rejected: Uint8Array): number {
  let n = 0;
  for (const r of rows) n += rejected[r]!;
  return n;
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


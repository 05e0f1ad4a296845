/**
 * Per-camera change between two calibrations of the same rig (A = the
 * reference, B = the newer one) and whether it is statistically significant
 * and within tolerance.
 *
 * Both rig files give T_root_cam per camera with a 6x6 covariance of the left
 * perturbation in the root frame, order [rx ry rz tx ty tz] (formats.md).
 * The change is Δ = boxMinus(T_B, T_A), i.e. T_B = exp(Δ)·T_A. The two
 * calibrations come from independent data, so cov(Δ) ≈ Σ_A + Σ_B (first
 * order), and the squared Mahalanobis distance d² = Δᵀ (Σ_A + Σ_B)⁻¹ Δ is
 * χ²-distributed with 6 degrees of freedom when the camera has not moved.
 *
 * Singular combined covariance (both files without uncertainty, e.g. two
 * ground-truth files, or the root camera): the significance is reported as
 * unavailable (null) and the verdict rests on the tolerances alone. No floor
 * is added: a made-up floor would make up a p-value too.
 *
 * Human-facing figures: position change |t_B − t_A| in mm (root frame) and
 * rotation angle of R_B·R_Aᵀ in degrees.
 */
import { boxMinus, compose, inverse, poseFrom, type Pose } from '../geometry/se3.js';
import { so3Angle, so3Log } from '../geometry/so3.js';
import { quatToMatrix } from '../geometry/rotation.js';
import { choleskyInPlace } from '../linalg/small.js';
import { InputError, type InputIssue } from '../errors.js';
import type { RigCamera, RigFile } from '../io/types.js';

const DEG = 180 / Math.PI;

/** Tolerances and significance level of a check or comparison. */
export interface Tolerances {
  /** Largest acceptable change of a camera's position, mm. */
  maxShiftMm: number;
  /** Largest acceptable change of a camera's orientation, degrees. */
  maxRotationDeg: number;
  /** A change is significant when its p-value is below this level. */
  significanceLevel: number;
}

/**
 * Defaults (common practice for rigs whose cameras feed metric perception):
 * 1 mm and 0.1°. 0.1° shifts a point 1 m away by 1.7 mm (so the two limits
 * bite at about the same working distance), and for a camera with a focal
 * length near 700 px it moves the image by about 1.2 px, two to four times a
 * typical detection RMS: where a miscalibration starts to show above the
 * noise. Significance level 0.01: an unchanged camera is flagged as
 * "changed" in about 1 check in 100.
 */
export const DEFAULT_TOLERANCES: Readonly<Tolerances> = Object.freeze({
  maxShiftMm: 1,
  maxRotationDeg: 0.1,
  significanceLevel: 0.01,
});

/**
 * Upper tail of χ² with 6 degrees of freedom, P(X > x). For even degrees of
 * freedom ν = 2m the survival function is a finite Poisson sum:
 * Q(x | 2m) = exp(−x/2) Σ_{k=0}^{m−1} (x/2)^k / k!  (Abramowitz & Stegun,
 * Handbook of Mathematical Functions, 26.4.21 (section number from memory)).
 * For ν = 6: exp(−x/2) (1 + x/2 + x²/8).
 */
export function chiSquare6Survival(x: number): number {
  if (!(x > 0)) return 1;
  const h = x / 2;
  return Math.exp(-h) * (1 + h + (h * h) / 2);
}

/**
 * Squared Mahalanobis distance Δᵀ S⁻¹ Δ by Cholesky of S (6x6 row-major).
 * Returns null when S is not positive definite (significance unavailable).
 */
export function mahalanobis2(delta: ArrayLike<number>, S: ArrayLike<number>): number | null {
  const L = Float64Array.from(S);
  // Relative zero check first: an all-zero S (files without uncertainty) is singular, not "tiny".
  let maxDiag = 0;
  for (let i = 0; i < 6; i++) maxDiag = Math.max(maxDiag, Math.abs(L[i * 7]!));
  if (!(maxDiag > 0)) return null;
  if (choleskyInPlace(L, 6) >= 0) return null;
  // Forward substitution L y = Δ; d² = |y|².
  const y = new Float64Array(6);
  let d2 = 0;
  for (let i = 0; i < 6; i++) {
    let s = delta[i]!;
    for (let k = 0; k < i; k++) s -= L[i * 6 + k]! * y[k]!;
    const lii = L[i * 6 + i]!;
    if (!(lii > 0)) return null;
    y[i] = s / lii;
    d2 += y[i]! * y[i]!;
  }
  return d2;
}

export type CameraVerdict =
  /** The root camera: it defines the frame, so it cannot move within it. */
  | 'reference'
  /** Change within tolerance (whether or not it is measurable). */
  | 'within-tolerance'
  /** Change beyond tolerance and statistically significant. */
  | 'moved'
  /** Change beyond tolerance but within the noise of the two calibrations. */
  | 'unclear'
  /** Camera present in only one of the two calibrations. */
  | 'not-compared';

/** Plain-word explanation of each verdict. */
export const VERDICT_TEXT: Record<CameraVerdict, string> = {
  reference: 'reference camera (defines the frame; a change of it shows up in every other camera)',
  'within-tolerance': 'within tolerance',
  moved: 'moved beyond tolerance; recalibrate',
  unclear: 'change beyond tolerance but within the noise; capture more frames and check again',
  'not-compared': 'not compared: the camera is missing from one side',
};

/** Verdicts that make the overall result fail (exit 3). */
export function verdictFails(v: CameraVerdict): boolean {
  return v === 'moved' || v === 'unclear' || v === 'not-compared';
}

export interface CameraDelta {
  name: string;
  verdict: CameraVerdict;
  /** Left-perturbation change Δ = boxMinus(T_B, T_A), [rx ry rz (rad) tx ty tz (m)], root frame; null when not compared. */
  delta: Float64Array | null;
  /** Position change t_B − t_A, mm, root frame axes. */
  shiftMm: [number, number, number] | null;
  /** |t_B − t_A|, mm. */
  shiftNormMm: number;
  /** Rotation vector of R_B·R_Aᵀ, degrees, root frame axes. */
  rotationDeg: [number, number, number] | null;
  /** Angle of R_B·R_Aᵀ, degrees. */
  rotationAngleDeg: number;
  /** Squared Mahalanobis distance (χ² with 6 dof when unchanged); null when unavailable. */
  mahalanobis2: number | null;
  /** P(χ²₆ > d²); null when unavailable. */
  pValue: number | null;
  /** pValue < significance level; null when unavailable. */
  significant: boolean | null;
  beyondTolerance: boolean;
  /** 1-sigma of the position change, mm, per root axis (from Σ_A + Σ_B). */
  sigmaShiftMm: [number, number, number] | null;
}

export interface RigComparison {
  root: string;
  tolerances: Tolerances;
  cameras: CameraDelta[];
  /** True when no camera fails (see verdictFails). */
  withinTolerance: boolean;
}

/** T_root_cam of a rig-file camera entry. */
export function rigCameraPose(c: RigCamera): Pose {
  return poseFrom(quatToMatrix(c.quaternion_wxyz), c.translation);
}

/** 3x3 position covariance of t from the 6x6 left-perturbation covariance: J Σ Jᵀ, J = [−[t]×, I]. */
function positionSigmaMm(t: ArrayLike<number>, S: ArrayLike<number>): [number, number, number] {
  const [tx, ty, tz] = [t[0]!, t[1]!, t[2]!];
  const J = [0, tz, -ty, 1, 0, 0, -tz, 0, tx, 0, 1, 0, ty, -tx, 0, 0, 0, 1];
  const out: number[] = [];
  for (let i = 0; i < 3; i++) {
    let v = 0;
    for (let a = 0; a < 6; a++) for (let b = 0; b < 6; b++) v += J[i * 6 + a]! * S[a * 6 + b]! * J[i * 6 + b]!;
    out.push(Math.sqrt(Math.max(0, v)) * 1000);
  }
  return out as [number, number, number];
}

/** Change of one camera from pose/covariance A to B (both T_root_cam, root-frame left perturbations). */
export function cameraDelta(name: string, T_A: Pose, covA: ArrayLike<number>, T_B: Pose, covB: ArrayLike<number>, tol: Tolerances, isRoot: boolean): CameraDelta {
  const delta = boxMinus(T_B, T_A);
  const S = new Float64Array(36);
  for (let i = 0; i < 36; i++) S[i] = covA[i]! + covB[i]!;
  const shift: [number, number, number] = [0, 1, 2].map((i) => (T_B.t[i]! - T_A.t[i]!) * 1000) as [number, number, number];
  const dR = compose(T_B, inverse(T_A)).R;
  const rv = so3Log(dR);
  const shiftNormMm = Math.hypot(...shift);
  const rotationAngleDeg = so3Angle(dR) * DEG;
  const d2 = isRoot ? null : mahalanobis2(delta, S);
  const pValue = d2 === null ? null : chiSquare6Survival(d2);
  const significant = pValue === null ? null : pValue < tol.significanceLevel;
  const beyondTolerance = shiftNormMm > tol.maxShiftMm || rotationAngleDeg > tol.maxRotationDeg;
  let verdict: CameraVerdict;
  if (isRoot) verdict = 'reference';
  else if (!beyondTolerance) verdict = 'within-tolerance';
  // Without a significance figure the estimate itself is all there is.
  else verdict = significant === false ? 'unclear' : 'moved';
  return {
    name,
    verdict,
    delta,
    shiftMm: shift,
    shiftNormMm,
    rotationDeg: [rv[0]! * DEG, rv[1]! * DEG, rv[2]! * DEG],
    rotationAngleDeg,
    mahalanobis2: d2,
    pValue,
    significant,
    beyondTolerance,
    sigmaShiftMm: positionSigmaMm(T_B.t, S),
  };
}

function notCompared(name: string): CameraDelta {
  return {
    name,
    verdict: 'not-compared',
    delta: null,
    shiftMm: null,
    shiftNormMm: NaN,
    rotationDeg: null,
    rotationAngleDeg: NaN,
    mahalanobis2: null,
    pValue: null,
    significant: null,
    beyondTolerance: false,
    sigmaShiftMm: null,
  };
}

/**
 * Compares two rig files camera by camera (A = reference, B = newer). Both
 * must share the same root camera (poses are relative to it); otherwise an
 * InputError explains it. Cameras found in only one file get 'not-compared'.
 */
export function compareRigFiles(a: RigFile, b: RigFile, tol: Tolerances = DEFAULT_TOLERANCES, names: { a?: string; b?: string } = {}): RigComparison {
  if (a.root !== b.root) {
    const issue: InputIssue = {
      ...(names.b ? { file: names.b } : {}),
      path: 'root',
      message: `root camera "${b.root}" differs from "${a.root}" in ${names.a ?? 'the reference'}; poses relative to different cameras cannot be compared directly`,
      hint: `solve again with reference_camera: ${a.root} in the session`,
    };
    throw new InputError('compare.different_root', [issue]);
  }
  const byName = new Map(b.cameras.map((c) => [c.name, c]));
  const cameras: CameraDelta[] = [];
  for (const ca of a.cameras) {
    const cb = byName.get(ca.name);
    if (!cb) {
      cameras.push(notCompared(ca.name));
      continue;
    }
    cameras.push(cameraDelta(ca.name, rigCameraPose(ca), ca.covariance, rigCameraPose(cb), cb.covariance, tol, ca.name === a.root));
  }
  const inA = new Set(a.cameras.map((c) => c.name));
  for (const cb of b.cameras) if (!inA.has(cb.name)) cameras.push(notCompared(cb.name));
  return { root: a.root, tolerances: { ...tol }, cameras, withinTolerance: !cameras.some((c) => verdictFails(c.verdict)) };
}

/** Checks tolerance values; returns one message per problem. */
export function toleranceProblems(tol: Tolerances): string[] {
  const out: string[] = [];
  if (!(tol.maxShiftMm > 0) || !Number.isFinite(tol.maxShiftMm)) out.push(`max shift ${tol.maxShiftMm} mm must be a positive number`);
  if (!(tol.maxRotationDeg > 0) || !Number.isFinite(tol.maxRotationDeg)) out.push(`max rotation ${tol.maxRotationDeg}° must be a positive number`);
  if (!(tol.significanceLevel > 0 && tol.significanceLevel < 1)) out.push(`significance level ${tol.significanceLevel} must be between 0 and 1 (exclusive)`);
  return out;
}

/**
 * Levenberg–Marquardt with trust-region style damping on a sparse `Problem`.
 *
 * Each iteration solves (H + λD) δ = −g with the Schur complement (schur.ts),
 * where H = J̃ᵀJ̃ and g = J̃ᵀr̃ are the loss-weighted Gauss–Newton matrix and
 * gradient, and D = diag(clamp(diag(H), diagonalFloor, diagonalCeiling))
 * (Marquardt's scaling, so the step is invariant to parameter units). The
 * trial point x ⊞ δ is accepted when the gain ratio
 *   ρ = (cost(x) − cost(x ⊞ δ)) / (L(0) − L(δ)),  L(0) − L(δ) = ½ δᵀ(λDδ − g)
 * exceeds `minGainRatio`. λ is then updated as in
 * H. B. Nielsen, "Damping parameter in Marquardt's method" (IMM-REP-1999-05):
 *   accepted: λ ← λ · max(lambdaDownMinFactor, 1 − (2ρ − 1)³),  ν ← lambdaUpFactor
 *   rejected: λ ← λ · ν,  ν ← 2ν
 */
import { OptionsError } from '../errors.js';
import type { Problem } from './problem-builder.js';
import { NormalEquations } from './schur.js';

export interface LmOptions {
  /** Maximum number of iterations (accepted plus rejected steps). Must be an integer ≥ 1. Stops with 'no_convergence'. */
  maxIterations: number;
  /** Function tolerance (dimensionless): converged when an accepted step gives |Δcost| < functionTolerance · cost. ≥ 0. */
  functionTolerance: number;
  /** Gradient tolerance (cost units per tangent unit): converged when max_i |g_i| < gradientTolerance at a linearisation point. ≥ 0. */
  gradientTolerance: number;
  /** Parameter tolerance (dimensionless): converged when ‖δ‖₂ < parameterTolerance · (‖x‖₂ + parameterTolerance), x over the non-constant blocks' storage. ≥ 0. */
  parameterTolerance: number;
  /** Initial damping λ₀ (dimensionless, relative to the Marquardt diagonal). > 0. */
  initialLambda: number;
  /** Smallest factor λ may shrink by on one accepted step (Nielsen uses 1/3). In (0, 1). */
  lambdaDownMinFactor: number;
  /** Factor λ grows by on the first rejection after an accepted step; it doubles on each further consecutive rejection. > 1. */
  lambdaUpFactor: number;
  /** λ never goes below this (dimensionless). ≥ 0. */
  minLambda: number;
  /** When λ exceeds this, no step can reduce the cost any more: stop with 'converged' (numerical minimum) if at least one step was accepted, else 'failure'. > minLambda. */
  maxLambda: number;
  /** Accept a step when the gain ratio ρ > minGainRatio (dimensionless). In [0, 1). */
  minGainRatio: number;
  /** Marquardt scaling: D_ii = min(max(H_ii, diagonalFloor), diagonalCeiling) (cost units per tangent unit²). > 0. */
  diagonalFloor: number;
  /** Upper clamp of the Marquardt diagonal. > diagonalFloor. */
  diagonalCeiling: number;
  /**
   * Keep the running maximum of the Marquardt diagonal over iterations,
   * D_ii ← max(D_ii(previous), clamp(H_ii)), as in Moré's MINPACK scaling
   * ("The Levenberg–Marquardt algorithm: implementation and theory", 1978).
   * Helps on badly scaled problems whose Jacobian columns shrink along the path.
   */
  diagonalMemory: boolean;
  /** Wall-clock limit in seconds; stops with 'no_convergence'. > 0 (Infinity allowed). */
  maxSolverTimeSeconds: number;
  /** Debug: compare every residual block's analytic Jacobian with central differences before iterating; a mismatch ends the solve with 'failure'. */
  checkJacobians: boolean;
  /** Central-difference step h along each tangent coordinate for checkJacobians (tangent units). > 0. */
  jacobianCheckStep: number;
  /** checkJacobians passes when |J_analytic − J_numeric| ≤ jacobianCheckRelTolerance · max(|J_analytic|, |J_numeric|, 1) entrywise. > 0. */
  jacobianCheckRelTolerance: number;
}

export const DEFAULT_LM_OPTIONS: Readonly<LmOptions> = Object.freeze({
  maxIterations: 50,
  functionTolerance: 1e-6,
  gradientTolerance: 1e-10,
  parameterTolerance: 1e-8,
  initialLambda: 1e-4,
  lambdaDownMinFactor: 1 / 3,
  lambdaUpFactor: 2,
  minLambda: 1e-16,
  maxLambda: 1e32,
  minGainRatio: 1e-3,
  diagonalFloor: 1e-6,
  diagonalCeiling: 1e32,
  diagonalMemory: false,
  maxSolverTimeSeconds: Infinity,
  checkJacobians: false,
  jacobianCheckStep: 1e-6,
  jacobianCheckRelTolerance: 1e-4,
});

/** Named presets (partial options merged over the defaults). */
export const lmPresets = Object.freeze({
  /** The defaults: good for bundle adjustment, where ~10 iterations reach the noise floor. */
  default: Object.freeze({}) as Readonly<Partial<LmOptions>>,
  /**
   * Tight tolerances and many iterations, for reference problems where the
   * optimum must be reached to many significant digits (e.g. NIST StRD).
   */
  precise: Object.freeze({
    maxIterations: 2000,
    functionTolerance: 1e-15,
    gradientTolerance: 0,
    parameterTolerance: 1e-14,
  }) as Readonly<Partial<LmOptions>>,
  /**
   * `precise` plus measures for hard, badly scaled starts: a large initial λ
   * (cautious first steps), Moré's diagonal memory, a λ floor low enough for
   * Gauss–Newton steps on huge Marquardt diagonals, and up to 20000 iterations.
   */
  robust: Object.freeze({
    maxIterations: 20000,
    functionTolerance: 1e-15,
    gradientTolerance: 0,
    parameterTolerance: 1e-14,
    initialLambda: 1e3,
    diagonalMemory: true,
    minLambda: 1e-30,
  }) as Readonly<Partial<LmOptions>>,
});

export interface OptionIssue {
  field: keyof LmOptions;
  value: unknown;
  constraint: string;
  message: string;
}

/** Returns every violated constraint (empty when valid). */
export function validateLmOptions(o: LmOptions): OptionIssue[] {
  const issues: OptionIssue[] = [];
  const check = (field: keyof LmOptions, ok: boolean, constraint: string) => {
    if (!ok) issues.push({ field, value: o[field], constraint, message: `${field} = ${String(o[field])} violates ${constraint}` });
  };
  const num = (v: unknown): v is number => typeof v === 'number' && !Number.isNaN(v);
  check('maxIterations', Number.isInteger(o.maxIterations) && o.maxIterations >= 1, 'maxIterations ≥ 1 (integer)');
  check('functionTolerance', num(o.functionTolerance) && o.functionTolerance >= 0, 'functionTolerance ≥ 0');
  check('gradientTolerance', num(o.gradientTolerance) && o.gradientTolerance >= 0, 'gradientTolerance ≥ 0');
  check('parameterTolerance', num(o.parameterTolerance) && o.parameterTolerance >= 0, 'parameterTolerance ≥ 0');
  check('initialLambda', num(o.initialLambda) && o.initialLambda > 0 && Number.isFinite(o.initialLambda), '0 < initialLambda < ∞');
  check('lambdaDownMinFactor', num(o.lambdaDownMinFactor) && o.lambdaDownMinFactor > 0 && o.lambdaDownMinFactor < 1, '0 < lambdaDownMinFactor < 1');
  check('lambdaUpFactor', num(o.lambdaUpFactor) && o.lambdaUpFactor > 1 && Number.isFinite(o.lambdaUpFactor), '1 < lambdaUpFactor < ∞');
  check('minLambda', num(o.minLambda) && o.minLambda >= 0, 'minLambda ≥ 0');
  check('maxLambda', num(o.maxLambda) && o.maxLambda > o.minLambda, 'maxLambda > minLambda');
  check('minGainRatio', num(o.minGainRatio) && o.minGainRatio >= 0 && o.minGainRatio < 1, '0 ≤ minGainRatio < 1');
  check('diagonalFloor', num(o.diagonalFloor) && o.diagonalFloor > 0, 'diagonalFloor > 0');
  check('diagonalCeiling', num(o.diagonalCeiling) && o.diagonalCeiling > o.diagonalFloor, 'diagonalCeiling > diagonalFloor');
  check('diagonalMemory', typeof o.diagonalMemory === 'boolean', 'diagonalMemory is a boolean');
  check('maxSolverTimeSeconds', num(o.maxSolverTimeSeconds) && o.maxSolverTimeSeconds > 0, 'maxSolverTimeSeconds > 0');
  check('checkJacobians', typeof o.checkJacobians === 'boolean', 'checkJacobians is a boolean');
  check('jacobianCheckStep', num(o.jacobianCheckStep) && o.jacobianCheckStep > 0, 'jacobianCheckStep > 0');
  check('jacobianCheckRelTolerance', num(o.jacobianCheckRelTolerance) && o.jacobianCheckRelTolerance > 0, 'jacobianCheckRelTolerance > 0');
  return issues;
}

export interface IterationRecord {
  /** 1-based iteration number. */
  iteration: number;
  /** Cost after this iteration (the trial cost if accepted, else unchanged). */
  cost: number;
  /** cost before − trial cost (positive = decrease; NaN when the trial could not be evaluated or solved). */
  costChange: number;
  /** max_i |g_i| at the linearisation point this step was computed from. */
  gradientMaxNorm: number;
  /** ‖δ‖₂ of the trial step (NaN when the linear solve failed). */
  stepNorm: number;
  /** λ used for this step. */
  lambda: number;
  /** Gain ratio ρ (NaN when not computed). */
  gainRatio: number;
  accepted: boolean;
  /** Wall-clock time of this iteration in seconds. */
  timeSeconds: number;
  /** Wall-clock time since the start of solve() in seconds. */
  cumulativeSeconds: number;
}

export type TerminationType = 'converged' | 'no_convergence' | 'failure';

export interface JacobianCheckEntry {
  residualBlock: number;
  parameterBlock: number;
  label: string;
  row: number;
  tangentIndex: number;
  analytic: number;
  numeric: number;
}

export interface JacobianCheckReport {
  ok: boolean;
  /** Worst entries (largest excess over the tolerance first), at most 10. */
  worst: JacobianCheckEntry[];
  /** Largest |a − n| / max(|a|, |n|, 1) over all entries. */
  maxRelativeError: number;
}

export interface SolveSummary {
  termination: TerminationType;
  /** Names the criterion that fired, with its numbers. */
  message: string;
  initialCost: number;
  finalCost: number;
  /** One record per tried step (accepted or rejected); a parameter-tolerance stop adds none. */
  iterations: IterationRecord[];
  acceptedSteps: number;
  rejectedSteps: number;
  totalSeconds: number;
  /** m: number of scalar residuals. */
  numResiduals: number;
  /** n: number of free tangent coordinates (non-constant blocks, minus fixed indices). */
  numFreeParameters: number;
  numParameterBlocks: number;
  numResidualBlocks: number;
  numEliminatedBlocks: number;
  /** Size of the dense reduced system (Σ kept tangent sizes). */
  reducedSystemSize: number;
  /** Present when options.checkJacobians was set. */
  jacobianCheck?: JacobianCheckReport;
}

export interface SolveOptions extends Partial<LmOptions> {
  /** Called after every iteration (for iteration logs). */
  onIteration?: (record: IterationRecord) => void;
}

/** Resolved options: defaults overlaid with the caller's fields; throws OptionsError listing every issue. */
export function resolveLmOptions(options: Partial<LmOptions> = {}): LmOptions {
  const o: LmOptions = { ...DEFAULT_LM_OPTIONS };
  for (const k of Object.keys(DEFAULT_LM_OPTIONS) as (keyof LmOptions)[]) {
    if (options[k] !== undefined) (o as unknown as Record<string, unknown>)[k] = options[k];
  }
  const issues = validateLmOptions(o);
  if (issues.length) throw new OptionsError('solver.invalid_options', issues.map((i) => i.message).join('; '));
  return o;
}

function now(): number {
  return performance.now() / 1000;
}

/**
 * Minimises the problem's cost in place (parameter blocks' values are
 * updated). Never throws for numerical trouble: that is reported in the
 * summary's termination and message. Throws OptionsError for invalid options.
 */
export function solve(problem: Problem, options: SolveOptions = {}): SolveSummary {
  const o = resolveLmOptions(options);
  const t0 = now();
  const L = problem.layout();
  const summary: SolveSummary = {
    termination: 'failure',
    message: '',
    initialCost: NaN,
    finalCost: NaN,
    iterations: [],
    acceptedSteps: 0,
    rejectedSteps: 0,
    totalSeconds: 0,
    numResiduals: L.numResiduals,
    numFreeParameters: L.numFree,
    numParameterBlocks: problem.numParameterBlocks,
    numResidualBlocks: problem.numResidualBlocks,
    numEliminatedBlocks: L.elimBlocks.length,
    reducedSystemSize: L.numKept,
  };
  const finish = (termination: TerminationType, message: string, cost: number): SolveSummary => {
    summary.termination = termination;
    summary.message = message;
    summary.finalCost = cost;
    summary.totalSeconds = now() - t0;
    return summary;
  };

  if (o.checkJacobians) {
    const report = checkJacobians(problem, o.jacobianCheckStep, o.jacobianCheckRelTolerance);
    summary.jacobianCheck = report;
    if (!report.ok) {
      const w = report.worst[0]!;
      return finish(
        'failure',
        `Jacobian check failed: residual block #${w.residualBlock}, "${w.label}" row ${w.row} tangent ${w.tangentIndex}: analytic ${w.analytic.toPrecision(6)} vs central difference ${w.numeric.toPrecision(6)}`,
        NaN,
      );
    }
  }

  // Two sets of normal equations: the trial point is linearised into `spare`
  // directly (residuals, cost and Jacobians in one pass over the data), and an
  // accepted step swaps the two, so no point is evaluated twice. A rejected
  // step (rare in bundle adjustment) leaves `ne` untouched.
  let ne = new NormalEquations(problem);
  let spare = new NormalEquations(problem);
  const N = L.numTangent;
  const delta = new Float64Array(N);
  const D = new Float64Array(N);
  // Saved values of every non-constant block, for restoring after a rejected step.
  const movable: number[] = [];
  for (let id = 0; id < problem.numParameterBlocks; id++) if (!problem.parameterBlock(id).constant) movable.push(id);
  const movableBlocks = movable.map((id) => problem.parameterBlock(id));
  const saved = movableBlocks.map((b) => new Float64Array(b.values.length));
  const deltaViews = movable.map((id) => delta.subarray(L.globalOffset[id]!, L.globalOffset[id]! + problem.parameterBlock(id).tangentSize));

  const lin = ne.linearize();
  if (!lin.ok) {
    return finish('failure', `residual block #${lin.residualBlock} could not be evaluated at the initial values`, NaN);
  }
  let cost = ne.cost;
  summary.initialCost = cost;
  let gmax = maxAbs(ne.g);
  if (gmax < o.gradientTolerance) {
    return finish('converged', `gradient tolerance: max|g| = ${gmax.toExponential(3)} < ${o.gradientTolerance} at the initial values`, cost);
  }
  let lambda = o.initialLambda;
  let nu = o.lambdaUpFactor;

  for (let it = 1; it <= o.maxIterations; it++) {
    const ti = now();
    if (ti - t0 > o.maxSolverTimeSeconds) {
      return finish('no_convergence', `time limit: ${(ti - t0).toFixed(3)} s > maxSolverTimeSeconds = ${o.maxSolverTimeSeconds}`, cost);
    }
    // The vector loops of an iteration live in small functions (below): this long
    // function runs once per solve and would execute them unoptimised, boxing every number.
    dampingDiagonal(D, ne.diag, o.diagonalFloor, o.diagonalCeiling, o.diagonalMemory && it > 1);
    const record: IterationRecord = {
      iteration: it,
      cost,
      costChange: NaN,
      gradientMaxNorm: gmax,
      stepNorm: NaN,
      lambda,
      gainRatio: NaN,
      accepted: false,
      timeSeconds: 0,
      cumulativeSeconds: 0,
    };
    const emit = () => {
      const t = now();
      record.timeSeconds = t - ti;
      record.cumulativeSeconds = t - t0;
      summary.iterations.push(record);
      options.onIteration?.(record);
    };
    const reject = (): SolveSummary | null => {
      summary.rejectedSteps++;
      lambda = lambda * nu;
      nu *= 2;
      emit();
      if (lambda > o.maxLambda) {
        return summary.acceptedSteps > 0
          ? finish('converged', `λ = ${lambda.toExponential(3)} exceeded maxLambda = ${o.maxLambda}: no step reduces the cost (numerical minimum)`, cost)
          : finish('failure', `λ = ${lambda.toExponential(3)} exceeded maxLambda = ${o.maxLambda} without any accepted step`, cost);
      }
      return null;
    };

    const st = ne.solve(lambda, D, delta);
    if (!st.ok) {
      const stop = reject();
      if (stop) return stop;
      continue;
    }
    const stepNorm = Math.sqrt(sumSquares(delta));
    record.stepNorm = stepNorm;
    const xNorm = Math.sqrt(valuesSumSquares(movableBlocks));
    if (stepNorm < o.parameterTolerance * (xNorm + o.parameterTolerance)) {
      // The step is not tried, so no iteration record is added (acceptedSteps + rejectedSteps = iterations.length).
      return finish(
        'converged',
        `parameter tolerance: ‖δ‖ = ${stepNorm.toExponential(3)} < ${o.parameterTolerance} · (‖x‖ + ${o.parameterTolerance}) = ${(o.parameterTolerance * (xNorm + o.parameterTolerance)).toExponential(3)}`,
        cost,
      );
    }
    // Predicted decrease L(0) − L(δ) = ½ δᵀ(λDδ − g).
    const model = predictedDecrease(delta, D, ne.g, lambda);
    // Trial point.
    applyStep(movableBlocks, saved, deltaViews);
    const ev = spare.linearize();
    const newCost = ev.ok ? spare.cost : NaN;
    const actual = cost - newCost;
    record.costChange = actual;
    const rho = model > 0 ? actual / model : actual > 0 ? 1 : -1;
    record.gainRatio = ev.ok ? rho : NaN;
    if (ev.ok && rho > o.minGainRatio) {
      summary.acceptedSteps++;
      const oldCost = cost;
      cost = newCost;
      record.cost = cost;
      record.accepted = true;
      lambda = Math.max(o.minLambda, lambda * Math.max(o.lambdaDownMinFactor, 1 - Math.pow(2 * rho - 1, 3)));
      nu = o.lambdaUpFactor;
      [ne, spare] = [spare, ne];
      emit();
      gmax = maxAbs(ne.g);
      if (Math.abs(actual) < o.functionTolerance * oldCost) {
        return finish(
          'converged',
          `function tolerance: |Δcost| = ${Math.abs(actual).toExponential(3)} < ${o.functionTolerance} · cost = ${(o.functionTolerance * oldCost).toExponential(3)}`,
          cost,
        );
      }
      if (gmax < o.gradientTolerance) {
        return finish('converged', `gradient tolerance: max|g| = ${gmax.toExponential(3)} < ${o.gradientTolerance}`, cost);
      }
    } else {
      for (let j = 0; j < movableBlocks.length; j++) movableBlocks[j]!.values.set(saved[j]!);
      const stop = reject();
      if (stop) return stop;
    }
  }
  return finish('no_convergence', `maxIterations = ${o.maxIterations} reached (cost ${cost.toExponential(6)})`, cost);
}

/** D_i = clamp(diag_i, floor, ceiling), or max(D_i, that) with memory (Marquardt scaling). */
function dampingDiagonal(D: Float64Array, diag: Float64Array, floor: number, ceiling: number, memory: boolean): void {
  for (let i = 0; i < D.length; i++) {
    const d = Math.min(Math.max(diag[i]!, floor), ceiling);
    D[i] = memory ? Math.max(D[i]!, d) : d;
  }
}

function sumSquares(v: Float64Array): number {
  let s = 0;
  for (let i = 0; i < v.length; i++) s += v[i]! * v[i]!;
  return s;
}

/** Σ over the blocks of ‖values‖². */
function valuesSumSquares(blocks: readonly { values: Float64Array }[]): number {
  let s = 0;
  for (let j = 0; j < blocks.length; j++) s += sumSquares(blocks[j]!.values);
  return s;
}

/** Predicted decrease of the damped Gauss–Newton model, L(0) − L(δ) = ½ δᵀ(λDδ − g). */
function predictedDecrease(delta: Float64Array, D: Float64Array, g: Float64Array, lambda: number): number {
  let m = 0;
  for (let i = 0; i < delta.length; i++) m += delta[i]! * (lambda * D[i]! * delta[i]! - g[i]!);
  return 0.5 * m;
}

/** Saves each block's values and moves it to values ⊞ δ_block. */
function applyStep(
  blocks: readonly { values: Float64Array; manifold: { plus(x: Float64Array, delta: Float64Array, out: Float64Array): void } }[],
  saved: Float64Array[],
  deltas: Float64Array[],
): void {
  for (let j = 0; j < blocks.length; j++) {
    const b = blocks[j]!;
    const keep = saved[j]!;
    const v = b.values;
    for (let i = 0; i < v.length; i++) keep[i] = v[i]!;
    b.manifold.plus(keep, deltas[j]!, v);
  }
}

function maxAbs(v: Float64Array): number {
  let m = 0;
  for (let i = 0; i < v.length; i++) {
    const a = Math.abs(v[i]!);
    if (a > m) m = a;
  }
  return m;
}

/**
 * Compares each residual block's analytic Jacobian ∂r/∂δ_k = J_inner M_k with
 * central differences (r(x ⊞ hε_i) − r(x ⊞ −hε_i)) / 2h along every tangent
 * coordinate of every parameter block it touches (constant ones included).
 * Values are restored afterwards. Debug aid: allocates freely.
 */
export function checkJacobians(problem: Problem, step = DEFAULT_LM_OPTIONS.jacobianCheckStep, relTol = DEFAULT_LM_OPTIONS.jacobianCheckRelTolerance): JacobianCheckReport {
  const entries: (JacobianCheckEntry & { excess: number })[] = [];
  let maxRel = 0;
  for (let i = 0; i < problem.numResidualBlocks; i++) {
    const rb = problem.residualBlock(i);
    const m = rb.numResiduals;
    const p = rb.innerSize;
    const params = problem.residualParams(i);
    const r0 = new Float64Array(m);
    const J = new Float64Array(m * p);
    const blocks = rb.parameterBlocks.map((id) => problem.parameterBlock(id));
    const maps = rb.mapped ? blocks.map((b) => new Float64Array(p * b.tangentSize)) : null;
    if (!rb.evaluate(params, r0, J, maps)) {
      entries.push({ residualBlock: i, parameterBlock: -1, label: '(evaluation failed)', row: -1, tangentIndex: -1, analytic: NaN, numeric: NaN, excess: Infinity });
      continue;
    }
    let col0 = 0;
    blocks.forEach((b, k) => {
      const t = b.tangentSize;
      // Analytic m x t block.
      const Jk = new Float64Array(m * t);
      for (let q = 0; q < m; q++) {
        for (let u = 0; u < t; u++) {
          let s = 0;
          if (maps) for (let c = 0; c < p; c++) s += J[q * p + c]! * maps[k]![c * t + u]!;
          else s = J[q * p + col0 + u]!;
          Jk[q * t + u] = s;
        }
      }
      col0 += t;
      const orig = Float64Array.from(b.values);
      const d = new Float64Array(t);
      const rp = new Float64Array(m);
      const rm = new Float64Array(m);
      for (let u = 0; u < t; u++) {
        d.fill(0);
        d[u] = step;
        b.manifold.plus(orig, d, b.values);
        const okp = rb.evaluate(params, rp, null, null);
        d[u] = -step;
        b.manifold.plus(orig, d, b.values);
        const okm = rb.evaluate(params, rm, null, null);
        b.values.set(orig);
        if (!okp || !okm) continue;
        for (let q = 0; q < m; q++) {
          const a = Jk[q * t + u]!;
          const n = (rp[q]! - rm[q]!) / (2 * step);
          const scale = Math.max(Math.abs(a), Math.abs(n), 1);
          const err = Math.abs(a - n);
          maxRel = Math.max(maxRel, err / scale);
          const excess = err - relTol * scale;
          if (excess > 0 || entries.length < 10)
            entries.push({ residualBlock: i, parameterBlock: b.id, label: b.label, row: q, tangentIndex: u, analytic: a, numeric: n, excess });
          if (entries.length > 200) {
            entries.sort((x, y) => y.excess - x.excess);
            entries.length = 10;
          }
        }
      }
    });
  }
  entries.sort((x, y) => y.excess - x.excess);
  const worst = entries.slice(0, 10);
  return {
    ok: !worst.some((e) => e.excess > 0),
    worst: worst.map(({ excess: _e, ...rest }) => rest),
    maxRelativeError: maxRel,
  };
}

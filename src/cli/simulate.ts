/**
 * `rigsolve simulate RIG-DESCRIPTION --out DIR`: a synthetic session
 * (session.yaml, detections.csv, truth.yaml) from a rig description and its
 * capture plan; options override the plan. Deterministic for a seed.
 */
import { InvalidArgumentError, type Command } from 'commander';
import { loadRigDescription } from '../rig/description-file.js';
import { simulate } from '../rig/simulate.js';
import { writeSimulation } from '../rig/simulate-files.js';
import type { CapturePlan } from '../rig/description.js';
import type { CliContext } from './context.js';

export function parseNumber(what: string, opts: { integer?: boolean; min?: number; max?: number } = {}) {
  return (value: string): number => {
    const x = Number(value);
    if (value.trim() === '' || !Number.isFinite(x) || (opts.integer && !Number.isInteger(x))) {
      throw new InvalidArgumentError(`${what} must be ${opts.integer ? 'an integer' : 'a number'}, got "${value}"`);
    }
    if (opts.min !== undefined && x < opts.min) throw new InvalidArgumentError(`${what} must be at least ${opts.min}, got ${x}`);
    if (opts.max !== undefined && x > opts.max) throw new InvalidArgumentError(`${what} must be at most ${opts.max}, got ${x}`);
    return x;
  };
}

function parseRange(value: string): [number, number] {
  const m = value.split(/[,:]/).map(Number);
  if (m.length !== 2 || !m.every((x) => Number.isFinite(x) && x > 0) || m[0]! > m[1]!) {
    throw new InvalidArgumentError(`expected MIN,MAX in metres with 0 < MIN <= MAX, got "${value}"`);
  }
  return [m[0]!, m[1]!];
}

export function registerSimulate(program: Command, ctx: CliContext): void {
  program
    .command('simulate')
    .summary('make a synthetic session from a rig description')
    .description(
      'Generate a synthetic session (session.yaml, detections.csv and truth.yaml with the true poses) from a rig ' +
        'description such as rigs/stereo-bench.yaml. The description\'s capture plan sets frames, distances, tilt, ' +
        'noise and outliers; the options below override it. The same seed gives the same files.',
    )
    .argument('<rig-description>', 'rig description file (format: rig-description/1)')
    .requiredOption('--out <dir>', 'folder to write session.yaml, detections.csv and truth.yaml into')
    .option('--frames <n>', 'number of frames (board placements or rig poses)', parseNumber('--frames', { integer: true, min: 1 }))
    .option('--seed <n>', 'random seed', parseNumber('--seed', { integer: true }))
    .option('--noise <px>', 'pixel noise, 1-sigma per axis', parseNumber('--noise', { min: 0 }))
    .option('--outliers <fraction>', 'fraction of detections made gross outliers', parseNumber('--outliers', { min: 0, max: 0.5 }))
    .option('--flipped <n>', 'number of checkerboard views with point ids rotated by 180°', parseNumber('--flipped', { integer: true, min: 0 }))
    .option('--distance <min,max>', 'board distance range from the chosen camera, metres', parseRange)
    .option(
      '--solve-intrinsics',
      'write a session that asks for every camera\'s intrinsics to be estimated: solve_intrinsics true, focal/center/distortion omitted (k3 held fixed for brown-conrady)',
    )
    .option('--force', 'overwrite existing files in the output folder')
    .action((file: string, o: Record<string, unknown>) => {
      const desc = loadRigDescription(file);
      if (o.solveIntrinsics) {
        for (const c of desc.cameras) {
          c.spec.solveIntrinsics = true;
          c.spec.intrinsicsGiven = false;
          c.spec.fixedIntrinsics = c.spec.model === 'brown-conrady' ? ['k3'] : [];
        }
      }
      const overrides: Partial<CapturePlan> = {};
      if (o.frames !== undefined) overrides.frames = o.frames as number;
      if (o.seed !== undefined) overrides.seed = o.seed as number;
      if (o.noise !== undefined) overrides.pixelNoisePx = o.noise as number;
      if (o.outliers !== undefined) overrides.outlierFraction = o.outliers as number;
      if (o.flipped !== undefined) overrides.flippedViews = o.flipped as number;
      if (o.distance !== undefined) overrides.distanceM = o.distance as [number, number];
      const sim = simulate(desc, overrides);
      const files = writeSimulation(o.out as string, sim, { force: Boolean(o.force) });
      const frames = new Set(sim.detections.map((d) => d.frame)).size;
      ctx.out(
        `simulated "${desc.name}": ${desc.cameras.length} cameras, ${frames} frames with detections, ${sim.views.length} views, ` +
          `${sim.detections.length} detections (noise ${sim.plan.pixelNoisePx} px, seed ${sim.plan.seed})`,
      );
      for (const f of files) ctx.out(`wrote ${f}`);
    });
}

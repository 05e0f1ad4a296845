/**
 * An in-memory Session from a simulation (no files): for tests and the
 * benchmark. Mirrors what loadSession produces from the written files.
 */
import type { DetectionTable, Session } from '../io/types.js';
import type { Simulation } from './simulate.js';
import { emptyDetectionTable } from '../io/session.js';

export function sessionFromSimulation(sim: Simulation, name = sim.description.name): Session {
  const d = sim.description;
  const camIndex = new Map(d.cameras.map((c, i) => [c.spec.name, i]));
  const tgtIndex = new Map(d.targets.map((t, i) => [t.spec.name, i]));
  const frames: string[] = [];
  const frameIndex = new Map<string, number>();
  const n = sim.detections.length;
  const table: DetectionTable = emptyDetectionTable(n);
  sim.detections.forEach((r, i) => {
    let f = frameIndex.get(r.frame);
    if (f === undefined) {
      f = frames.length;
      frames.push(r.frame);
      frameIndex.set(r.frame, f);
    }
    table.frame[i] = f;
    table.camera[i] = camIndex.get(r.camera)!;
    table.target[i] = tgtIndex.get(r.target)!;
    table.point[i] = r.point;
    table.u[i] = r.u;
    table.v[i] = r.v;
    table.line[i] = i + 2;
  });
  return {
    format: 'rig-session/1',
    name,
    path: d.path,
    referenceCamera: d.referenceCamera,
    cameras: d.cameras.map((c) => ({
      ...c.spec,
      params: Float64Array.from(c.spec.params),
      pixelSigma: sim.plan.pixelNoisePx > 0 ? sim.plan.pixelNoisePx : c.spec.pixelSigma,
    })),
    targets: d.targets.map((t) => t.spec),
    scene: d.scene,
    detectionsPath: '(simulated)',
    frames,
    detections: table,
  };
}

/**
 * `rigsolve validate FILE`: loads a session (with its detections) or a rig
 * file, reports every problem, or prints a short summary. Exit 0 or 2.
 */
import type { Command } from 'commander';
import { IssueCollector } from '../io/issues.js';
import { loadRigFile, RIG_FORMAT } from '../io/rig-file.js';
import { loadSession } from '../io/session.js';
import type { RigFile, Session } from '../io/types.js';
import { parseYaml, readTextFile } from '../io/yaml-source.js';
import type { CliContext } from './context.js';

/** Format key of a YAML file, or undefined when it cannot be read (the loader then reports why). */
function sniffFormat(path: string): string | undefined {
  const probe = new IssueCollector();
  const f = readTextFile(path, probe, 'input');
  if (!f) return undefined;
  const src = parseYaml(path, f.text, probe);
  const data = src?.data;
  if (data && typeof data === 'object' && typeof (data as { format?: unknown }).format === 'string') {
    return (data as { format: string }).format;
  }
  return undefined;
}

export function sessionSummary(s: Session, file: string): string[] {
  const counts = new Array<number>(s.cameras.length).fill(0);
  for (let i = 0; i < s.detections.count; i++) counts[s.detections.camera[i]!]!++;
  const w = Math.max(...s.cameras.map((c) => c.name.length), ...s.targets.map((t) => t.name.length));
  const lines = [
    `✔ ${file}: session "${s.name}" is valid (${s.scene}, reference camera ${s.referenceCamera})`,
    `  cameras: ${s.cameras.length}`,
  ];
  s.cameras.forEach((c, i) => {
    const intr = c.intrinsicsGiven ? (c.solveIntrinsics ? 'intrinsics given, refined' : 'intrinsics given, fixed') : 'intrinsics estimated';
    lines.push(`    ${c.name.padEnd(w)}  ${c.model} ${c.resolution[0]}x${c.resolution[1]}  ${counts[i]} detections  (${intr})`);
  });
  lines.push(`  targets: ${s.targets.length}`);
  for (const t of s.targets) {
    const desc =
      t.kind === 'checkerboard'
        ? `checkerboard ${t.innerCorners![0]}x${t.innerCorners![1]} inner corners, square ${(t.square! * 1000).toPrecision(4)} mm`
        : `points`;
    lines.push(`    ${t.name.padEnd(w)}  ${desc} (${t.numPoints} points)`);
  }
  if (s.detectionsPattern !== undefined) lines.push(`  detections: from images ${s.detectionsPattern} (found by solve; run rigsolve detect to check them)`);
  else lines.push(`  frames: ${s.frames.length}`, `  detections: ${s.detections.count}`);
  return lines;
}

export function rigSummary(r: RigFile, file: string): string[] {
  const lines = [`✔ ${file}: rig "${r.name}" is valid (root ${r.root}, ${r.cameras.length} cameras)`];
  for (const c of r.cameras) {
    lines.push(`    ${c.name}  ${c.model} ${c.resolution[0]}x${c.resolution[1]}  rms ${c.rms_px} px  ${c.detections_used} detections used`);
  }
  lines.push(`  rms ${r.quality.rms_px} px, sigma0 ${r.quality.sigma0}, converged ${r.quality.converged}`);
  return lines;
}

export function registerValidate(program: Command, ctx: CliContext): void {
  program
    .command('validate')
    .description('check a session file and its detections (or a rig file) and print a summary')
    .argument('<file>', 'session YAML/JSON (rig-session/1) or rig file (rig-calibration/1)')
    .action((file: string) => {
      const fmt = sniffFormat(file);
      if (fmt !== undefined && fmt.startsWith(RIG_FORMAT.split('/')[0]! + '/')) {
        for (const l of rigSummary(loadRigFile(file), file)) ctx.out(l);
      } else {
        for (const l of sessionSummary(loadSession(file, { detections: 'csv-or-images' }), file)) ctx.out(l);
      }
    });
}

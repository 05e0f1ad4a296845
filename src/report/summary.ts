/**
 * Terminal summaries of a solved rig: one row per camera (position in mm and
 * roll-pitch-yaw in degrees relative to the reference camera, their 1-sigma,
 * RMS reprojection error, detections used / rejected), the quality line,
 * rejected views, warnings and the safety caution.
 */
import type { RigFile } from '../io/types.js';
import type { RigSolution } from '../rig/solve.js';

export const SAFETY_CAUTION =
  'Caution: a miscalibrated rig makes a machine misjudge distances. Validate this calibration before deployment ' +
  "and follow the operator's safety process and applicable regulations.";

function pad(s: string, n: number, right = false): string {
  return right ? s.padEnd(n) : s.padStart(n);
}

function f(x: number, digits: number): string {
  return Number.isFinite(x) ? x.toFixed(digits) : '—';
}

/** Plain-text table; every column labels its unit. */
export function cameraTable(rig: RigFile): string {
  const head = [
    pad('camera', 16, true),
    pad('x mm', 9),
    pad('y mm', 9),
    pad('z mm', 9),
    pad('±xyz mm', 16),
    pad('roll°', 8),
    pad('pitch°', 8),
    pad('yaw°', 8),
    pad('±rpy°', 17),
    pad('RMS px', 7),
    pad('used', 7),
    pad('rej', 5),
  ].join(' ');
  const lines = [head, '-'.repeat(head.length)];
  for (const c of rig.cameras) {
    const t = c.translation.map((v) => v * 1000);
    const st = c.sigma_translation_mm;
    const sr = c.sigma_rotation_deg;
    lines.push(
      [
        pad(c.parent === null ? `${c.name} (ref)` : c.name, 16, true),
        pad(f(t[0]!, 1), 9),
        pad(f(t[1]!, 1), 9),
        pad(f(t[2]!, 1), 9),
        pad(`${f(st[0], 2)}/${f(st[1], 2)}/${f(st[2], 2)}`, 16),
        pad(f(c.rpy_deg[0], 3), 8),
        pad(f(c.rpy_deg[1], 3), 8),
        pad(f(c.rpy_deg[2], 3), 8),
        pad(`${f(sr[0], 3)}/${f(sr[1], 3)}/${f(sr[2], 3)}`, 17),
        pad(f(c.rms_px, 3), 7),
        pad(String(c.detections_used), 7),
        pad(String(c.detections_rejected), 5),
      ].join(' '),
    );
  }
  return lines.join('\n');
}

export function solveSummaryText(rig: RigFile, solution: RigSolution, outPath?: string): string {
  const q = rig.quality;
  const out: string[] = [];
  out.push(`rig "${rig.name}": ${rig.cameras.length} cameras, reference ${rig.root}; poses are T_${rig.root}_camera (camera in the reference camera's optical frame)`);
  out.push('');
  out.push(cameraTable(rig));
  out.push('');
  out.push(
    `RMS ${f(q.rms_px, 3)} px · sigma0 ${f(q.sigma0, 3)} · ${q.frames_used} frames · ${q.iterations} iterations · ${q.converged ? 'converged' : 'NOT converged'} (${solution.summary.message})`,
  );
  out.push('±: 1-sigma from the covariance scaled by sigma0²; sigma0 near 1 means the stated pixel noise matches the residuals.');
  const solved = solution.cameras.filter((c) => c.intrinsicsSolved && c.intrinsicsCovariance);
  if (solved.length > 0) {
    out.push('');
    out.push('intrinsics refined in the joint solve (value ± 1-sigma; px for fx fy cx cy):');
    for (const c of solved) {
      const n = c.model.numParams;
      const parts = c.model.paramNames.map((name, i) => {
        const sd = Math.sqrt(Math.max(0, c.intrinsicsCovariance![i * n + i]!));
        const v = c.intrinsics[i]!;
        if (sd === 0) return `${name} ${v} (fixed)`;
        return i < 4 ? `${name} ${v.toFixed(2)}±${sd.toFixed(2)}` : `${name} ${v.toPrecision(4)}±${sd.toPrecision(2)}`;
      });
      out.push(`  ${c.name.padEnd(16)} ${parts.join('  ')}`);
    }
  }
  const priorRows = solution.cameras.filter((c) => c.sigmasFromDesign !== undefined);
  if (priorRows.length > 0) {
    out.push('');
    out.push('design prior: how far the data moved each camera from its design (whitened distance, in sigmas of the design):');
    for (const c of priorRows) out.push(`  ${c.name.padEnd(16)} ${c.sigmasFromDesign!.toFixed(2)} σ${c.sigmasFromDesign! > 3 ? '  ← far from the design: check the mounting or the drawing' : ''}`);
  }
  if (solution.rejectedViews.length > 0) {
    out.push('');
    out.push(`${solution.rejectedViews.length} view(s) set aside:`);
    const shown = solution.rejectedViews.slice(0, 20);
    for (const v of shown) out.push(`  frame ${v.frame}, camera ${v.camera}, target ${v.target}: ${v.reason}`);
    if (solution.rejectedViews.length > shown.length) out.push(`  … and ${solution.rejectedViews.length - shown.length} more (see --json)`);
  }
  if (solution.warnings.length > 0) {
    out.push('');
    for (const w of solution.warnings) out.push(`warning: ${w}`);
  }
  if (outPath) {
    out.push('');
    out.push(`wrote ${outPath}`);
  }
  out.push('');
  out.push(SAFETY_CAUTION);
  return out.join('\n');
}

/** Machine-readable summary (for --json). */
export function solveSummaryJson(rig: RigFile, solution: RigSolution, outPath?: string): object {
  return {
    rig: outPath ?? null,
    name: rig.name,
    root: rig.root,
    quality: rig.quality,
    termination: solution.summary.termination,
    message: solution.summary.message,
    cameras: rig.cameras.map((c) => ({
      name: c.name,
      parent: c.parent,
      position_mm: c.translation.map((v) => v * 1000),
      rpy_deg: c.rpy_deg,
      sigma_translation_mm: c.sigma_translation_mm,
      sigma_rotation_deg: c.sigma_rotation_deg,
      rms_px: c.rms_px,
      detections_used: c.detections_used,
      detections_rejected: c.detections_rejected,
    })),
    design_prior_sigmas: Object.fromEntries(solution.cameras.filter((c) => c.sigmasFromDesign !== undefined).map((c) => [c.name, c.sigmasFromDesign])),
    rejected_views: solution.rejectedViews,
    warnings: solution.warnings,
    caution: SAFETY_CAUTION,
  };
}

/**
 * Terminal and JSON reports of `check` and `compare`: per camera the change
 * in position (mm) and orientation (degrees), its significance, the verdict
 * in plain words; for `check` also the RMS with the reference extrinsics held
 * fixed. Every column labels its unit.
 */
import type { RigCheck } from '../rig/check.js';
import { VERDICT_TEXT, type CameraDelta, type RigComparison } from '../rig/compare.js';
import { SAFETY_CAUTION } from './summary.js';

function f(x: number | null | undefined, digits: number): string {
  return x !== null && x !== undefined && Number.isFinite(x) ? x.toFixed(digits) : '—';
}

function p(x: number | null): string {
  if (x === null) return 'n/a';
  if (x < 1e-15) return '<1e-15';
  return x < 1e-4 ? x.toExponential(1) : x.toFixed(4);
}

function deltaTable(cmp: RigComparison): string[] {
  const head = ['camera'.padEnd(16), 'shift mm'.padStart(9), '±mm'.padStart(6), 'rot °'.padStart(8), 'd²(6)'.padStart(9), 'p'.padStart(8), '  verdict'].join(' ');
  const lines = [head, '-'.repeat(head.length + 20)];
  for (const c of cmp.cameras) {
    const sig = c.sigmaShiftMm ? Math.hypot(...c.sigmaShiftMm) : NaN;
    lines.push(
      [
        c.name.padEnd(16),
        f(c.shiftNormMm, 3).padStart(9),
        f(sig, 2).padStart(6),
        f(c.rotationAngleDeg, 4).padStart(8),
        f(c.mahalanobis2, 2).padStart(9),
        p(c.pValue).padStart(8),
        `  ${VERDICT_TEXT[c.verdict]}`,
      ].join(' '),
    );
  }
  return lines;
}

function toleranceLine(cmp: RigComparison): string {
  const t = cmp.tolerances;
  return `tolerances: shift ≤ ${t.maxShiftMm} mm, rotation ≤ ${t.maxRotationDeg}°; significant when p < ${t.significanceLevel} (χ² with 6 degrees of freedom on the change and both covariances)`;
}

function overallLine(cmp: RigComparison): string {
  const bad = cmp.cameras.filter((c) => c.verdict === 'moved' || c.verdict === 'unclear' || c.verdict === 'not-compared');
  if (bad.length === 0) return 'overall: every camera is within tolerance';
  return `overall: OUT OF TOLERANCE: ${bad.map((c) => `${c.name} (${c.verdict})`).join(', ')}`;
}

export function comparisonText(cmp: RigComparison, nameA: string, nameB: string): string {
  const out = [
    `change from ${nameA} to ${nameB}, per camera, relative to the root camera ${cmp.root} (shift: |Δposition|; rot: angle of the relative rotation; ±: 1-sigma of the shift from both covariances)`,
    '',
    ...deltaTable(cmp),
    '',
    toleranceLine(cmp),
    overallLine(cmp),
    '',
    SAFETY_CAUTION,
  ];
  return out.join('\n');
}

function deltaJson(c: CameraDelta): object {
  return {
    name: c.name,
    verdict: c.verdict,
    verdict_text: VERDICT_TEXT[c.verdict],
    shift_mm: Number.isFinite(c.shiftNormMm) ? c.shiftNormMm : null,
    shift_xyz_mm: c.shiftMm,
    sigma_shift_xyz_mm: c.sigmaShiftMm,
    rotation_deg: Number.isFinite(c.rotationAngleDeg) ? c.rotationAngleDeg : null,
    rotation_vector_deg: c.rotationDeg,
    delta_left_perturbation: c.delta ? Array.from(c.delta) : null,
    mahalanobis_squared: c.mahalanobis2,
    p_value: c.pValue,
    significant: c.significant,
    beyond_tolerance: c.beyondTolerance,
  };
}

export function comparisonJson(cmp: RigComparison, nameA: string, nameB: string): object {
  return {
    a: nameA,
    b: nameB,
    root: cmp.root,
    tolerances: { max_shift_mm: cmp.tolerances.maxShiftMm, max_rotation_deg: cmp.tolerances.maxRotationDeg, significance_level: cmp.tolerances.significanceLevel },
    within_tolerance: cmp.withinTolerance,
    cameras: cmp.cameras.map(deltaJson),
    caution: SAFETY_CAUTION,
  };
}

export function checkText(chk: RigCheck, sessionPath: string, rigPath: string): string {
  const out: string[] = [];
  out.push(`check of ${rigPath} against new data ${sessionPath} (${chk.freshSolution.framesUsed} frames)`);
  out.push('');
  out.push('a. reprojection RMS per camera (px): reference = its own calibration data; held = new data with the reference extrinsics held fixed; fresh = new data after a fresh solve;');
  out.push('   cameras that share frames with a moved camera show a raised held RMS too: table b says which camera moved');
  const head = ['camera'.padEnd(16), 'reference'.padStart(10), 'held'.padStart(8), 'fresh'.padStart(8), 'used'.padStart(7)].join(' ');
  out.push(head, '-'.repeat(head.length));
  for (const r of chk.rms) {
    out.push([r.name.padEnd(16), f(r.referencePx, 3).padStart(10), f(r.fixedPx, 3).padStart(8), f(r.freshPx, 3).padStart(8), String(r.fixedDetectionsUsed).padStart(7)].join(' '));
  }
  out.push('');
  out.push(`b. change from the reference to the fresh solve, relative to the root camera ${chk.comparison.root}`);
  out.push(...deltaTable(chk.comparison));
  out.push('');
  out.push(`c. ${toleranceLine(chk.comparison)}`);
  out.push(overallLine(chk.comparison));
  if (chk.notes.length) {
    out.push('');
    for (const n of chk.notes) out.push(`note: ${n}`);
  }
  out.push('');
  out.push(`${rigPath} was not modified.`);
  out.push(SAFETY_CAUTION);
  return out.join('\n');
}

export function checkJson(chk: RigCheck, sessionPath: string, rigPath: string): object {
  return {
    session: sessionPath,
    against: rigPath,
    frames_used: chk.freshSolution.framesUsed,
    within_tolerance: chk.withinTolerance,
    tolerances: {
      max_shift_mm: chk.comparison.tolerances.maxShiftMm,
      max_rotation_deg: chk.comparison.tolerances.maxRotationDeg,
      significance_level: chk.comparison.tolerances.significanceLevel,
    },
    rms_px: chk.rms.map((r) => ({
      name: r.name,
      reference: r.referencePx,
      held_fixed: Number.isFinite(r.fixedPx) ? r.fixedPx : null,
      fresh: Number.isFinite(r.freshPx) ? r.freshPx : null,
      held_fixed_detections_used: r.fixedDetectionsUsed,
    })),
    cameras: chk.comparison.cameras.map(deltaJson),
    fresh_quality: chk.fresh.quality,
    notes: chk.notes,
    caution: SAFETY_CAUTION,
  };
}

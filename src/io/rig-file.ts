/**
 * Rig file (`format: rig-calibration/1`, formats.md): writer and loader.
 *
 * Numbers are written in the shortest form that parses back to the same
 * double (ECMAScript Number→String, which the yaml package uses; −0 is kept
 * as "-0"), so write → load is exact to the bit. Short numeric lists
 * (translation, quaternion_wxyz, covariance, …) are written in flow style on
 * one line; covariance is a flat row-major list of 36 numbers.
 */
import { Document, isScalar, visit } from 'yaml';
import { z } from 'zod';
import { CAMERA_MODEL_NAMES, type CameraModelName } from '../camera/model.js';
import { RigCalError } from '../errors.js';
import type { RigFile } from './types.js';
import { writeFileAtomic, type WriteOptions } from './atomic.js';
import { describeValue, didYouMean, IssueCollector } from './issues.js';
import { parseYaml, readTextFile, zodIssuesToInput } from './yaml-source.js';
import { MODEL_PARAM_NAMES, NAME_PATTERN } from './session-schema.js';
import { symmetricPsd } from '../linalg/psd.js';

export const RIG_FORMAT = 'rig-calibration/1';

const name = z.string().regex(NAME_PATTERN);
const vec = (n: number, item: z.ZodNumber = z.number()) => z.array(item).length(n);
const nonNeg = () => z.number().nonnegative();

export const rigCameraSchema = z.looseObject({
  name,
  parent: name.nullable().meta({ description: 'The root camera name; null for the root itself.' }),
  translation: vec(3).meta({ description: 't_parent_camera, metres.' }),
  quaternion_wxyz: vec(4).meta({ description: 'R_parent_camera as a unit quaternion [w, x, y, z], w >= 0.' }),
  rpy_deg: vec(3).meta({ description: 'Fixed-axis roll, pitch, yaw (R = Rz·Ry·Rx), degrees.' }),
  sigma_translation_mm: vec(3, nonNeg()),
  sigma_rotation_deg: vec(3, nonNeg()),
  covariance: vec(36).meta({ description: '6x6 row-major, order rx ry rz tx ty tz (rad, m).' }),
  model: z.enum(CAMERA_MODEL_NAMES as [CameraModelName, ...CameraModelName[]]),
  resolution: z.tuple([z.int().positive(), z.int().positive()]),
  focal: z.tuple([z.number().positive(), z.number().positive()]),
  center: z.tuple([z.number(), z.number()]),
  distortion: z.array(z.number()),
  rms_px: nonNeg(),
  detections_used: z.int().nonnegative(),
  detections_rejected: z.int().nonnegative(),
});

export const rigQualitySchema = z.looseObject({
  rms_px: nonNeg(),
  sigma0: nonNeg(),
  frames_used: z.int().nonnegative(),
  iterations: z.int().nonnegative(),
  converged: z.boolean(),
});

export const rigFileSchema = z
  .looseObject({
    format: z.literal(RIG_FORMAT),
    name: z.string(),
    root: name,
    cameras: z.array(rigCameraSchema).min(1),
    quality: rigQualitySchema,
  })
  .meta({ title: 'rigsolve rig calibration (rig-calibration/1)' });

const CAMERA_ORDER = Object.keys(rigCameraSchema.shape);
const QUALITY_ORDER = Object.keys(rigQualitySchema.shape);
const TOP_ORDER = Object.keys(rigFileSchema.shape);

const RIG_FIELD_HELP: Record<string, string> = {
  format: `the first line must be format: ${RIG_FORMAT}`,
  root: 'name the reference camera',
  parent: 'the root camera name (null for the root itself)',
  translation: 'three numbers [x, y, z] in metres',
  quaternion_wxyz: 'four numbers [w, x, y, z], unit norm, w >= 0',
  rpy_deg: 'three numbers [roll, pitch, yaw] in degrees',
  covariance: '36 numbers, row-major 6x6, order rx ry rz tx ty tz',
  sigma_translation_mm: 'three numbers >= 0',
  sigma_rotation_deg: 'three numbers >= 0',
  resolution: '[width, height], positive integers',
  focal: '[fx, fy] in pixels, > 0',
  center: '[cx, cy] in pixels',
  quality: 'rms_px, sigma0, frames_used, iterations, converged',
  converged: 'true or false',
};

/** Puts known keys in the contract's order, then any extra keys in their own order. */
function ordered(obj: Record<string, unknown>, order: readonly string[]): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const k of order) if (k in obj) out[k] = obj[k];
  for (const k of Object.keys(obj)) if (!(k in out)) out[k] = obj[k];
  return out;
}

/** YAML text of a rig file (no validation). */
export function rigFileToYaml(rig: RigFile): string {
  const plain = ordered(rig as Record<string, unknown>, TOP_ORDER);
  plain.cameras = rig.cameras.map((c) => ordered(c as Record<string, unknown>, CAMERA_ORDER));
  plain.quality = ordered(rig.quality as Record<string, unknown>, QUALITY_ORDER);
  return toCompactYaml(plain);
}

/** YAML text with every list of plain values on one line (`[1, 2, 3]`), as the contract's examples show. */
export function toCompactYaml(value: unknown): string {
  const doc = new Document(value);
  visit(doc, {
    Seq(_key, node) {
      if (node.items.length > 0 && node.items.every((it) => isScalar(it))) node.flow = true;
    },
  });
  return doc.toString({ lineWidth: 0, flowCollectionPadding: false });
}

/**
 * Writes a rig file atomically. Refuses to write a rig that would not load
 * back (non-finite numbers, wrong lengths): that is a bug upstream, reported
 * as RigCalError 'output.invalid_rig'. Throws OptionsError when the file
 * exists and `force` is not set.
 */
export function writeRigFile(path: string, rig: RigFile, opts: WriteOptions = {}): void {
  const problems = checkRigData(rig);
  if (problems.length) {
    throw new RigCalError('output.invalid_rig', `refusing to write an invalid rig file ${path}: ${problems.slice(0, 3).join('; ')}`);
  }
  writeFileAtomic(path, rigFileToYaml(rig), opts);
}

function checkRigData(rig: RigFile): string[] {
  const r = rigFileSchema.safeParse(rig);
  if (!r.success) return r.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`);
  const problems: string[] = [];
  rig.cameras.forEach((c, i) => {
    const p = symmetricPsd(c.covariance, 6);
    if (!p.ok) problems.push(`cameras.${i}.covariance: not symmetric positive semi-definite (${p.message})`);
  });
  return problems;
}

/** Loads and validates a rig file. Throws InputError listing every issue. */
export function loadRigFile(path: string): RigFile {
  const issues = new IssueCollector();
  const rig = loadRigFileCollect(path, issues);
  issues.throwIfAny('rig.invalid');
  return rig!;
}

/** Quaternion norm tolerance when loading (files written with ~17 digits are far inside it). */
const QUAT_NORM_TOL = 1e-6;

export function loadRigFileCollect(path: string, issues: IssueCollector): RigFile | undefined {
  const f = readTextFile(path, issues, 'rig');
  if (!f) return undefined;
  const src = parseYaml(path, f.text, issues);
  if (!src) return undefined;
  const data = src.data as Record<string, unknown> | null;
  const before = issues.total;
  if (data === null || typeof data !== 'object' || Array.isArray(data)) {
    issues.add({ file: path, line: 1, message: `expected a mapping of rig fields, found ${describeValue(data)}`, hint: `a rig file starts with "format: ${RIG_FORMAT}"` });
    return undefined;
  }
  if (data.format !== RIG_FORMAT) {
    const fmt = data.format;
    issues.add(
      src.issueAt(
        ['format'],
        fmt === undefined ? 'missing required field "format"' : `unknown format ${describeValue(fmt)}, expected "${RIG_FORMAT}"`,
        typeof fmt === 'string' && fmt.startsWith('rig-session/')
          ? 'this is a session (input) file; pass a rig file instead'
          : typeof fmt === 'string' && fmt.startsWith('rig-calibration/')
            ? `this version of rigsolve reads ${RIG_FORMAT}; use a matching rigsolve version`
            : `a rig file starts with "format: ${RIG_FORMAT}"`,
      ),
    );
    return undefined;
  }
  const parsed = rigFileSchema.safeParse(data, { reportInput: true });
  if (!parsed.success) {
    zodIssuesToInput(src, parsed.error.issues, RIG_FIELD_HELP, () => [], issues);
  }
  const rawCams = Array.isArray(data.cameras) ? (data.cameras as unknown[]) : [];
  const names: string[] = [];
  rawCams.forEach((rc, i) => {
    const r = rigCameraSchema.safeParse(rc);
    if (!r.success) return;
    const c = r.data;
    if (names.includes(c.name)) issues.add(src.issueAt(['cameras', i, 'name'], `duplicate camera name "${c.name}"`, 'each camera appears once'));
    names.push(c.name);
    const q = c.quaternion_wxyz;
    const norm = Math.hypot(q[0]!, q[1]!, q[2]!, q[3]!);
    if (Math.abs(norm - 1) > QUAT_NORM_TOL) {
      issues.add(src.issueAt(['cameras', i, 'quaternion_wxyz'], `quaternion norm is ${norm}, expected 1`, 'write a unit quaternion [w, x, y, z]'));
    } else if (q[0]! < 0) {
      issues.add(src.issueAt(['cameras', i, 'quaternion_wxyz'], `quaternion w = ${q[0]} is negative`, 'negate all four components (same rotation, w >= 0)'));
    }
    const psd = symmetricPsd(c.covariance, 6);
    if (!psd.ok) {
      issues.add(
        src.issueAt(['cameras', i, 'covariance'], `covariance is not symmetric positive semi-definite: ${psd.message}`, 'write the 6x6 covariance of a solve unchanged (symmetric, row-major), or solve again'),
      );
    }
    const nd = MODEL_PARAM_NAMES[c.model].length - 4;
    if (c.distortion.length !== nd) {
      issues.add(src.issueAt(['cameras', i, 'distortion'], `model ${c.model} takes ${nd} distortion coefficient(s), received ${c.distortion.length}`, `write ${nd} numbers`));
    }
  });
  if (typeof data.root === 'string' && rawCams.length) {
    const root = data.root;
    const rootKnown = names.includes(root);
    if (!rootKnown && names.length === rawCams.length) {
      issues.add(src.issueAt(['root'], `root "${root}" is not among the cameras`, didYouMean(root, names, 'a camera name:')));
    }
    // Parent checks only make sense against a root that exists.
    if (rootKnown) rawCams.forEach((rc, i) => {
      const r = rigCameraSchema.safeParse(rc);
      if (!r.success) return;
      const { name: n, parent } = r.data;
      if (n === root) {
        const { translation: t, quaternion_wxyz: q } = r.data;
        // Contract: the root has the identity pose (written exactly as 0 and 1 by the tool).
        if (Math.hypot(t[0]!, t[1]!, t[2]!) > 1e-12 || Math.abs(q[0]! - 1) > 1e-12 || Math.hypot(q[1]!, q[2]!, q[3]!) > 1e-12) {
          issues.add(src.issueAt(['cameras', i], `the root camera "${n}" must have the identity pose`, 'write translation: [0, 0, 0] and quaternion_wxyz: [1, 0, 0, 0]'));
        }
      }
      if (n === root && parent !== null) issues.add(src.issueAt(['cameras', i, 'parent'], `the root camera's parent must be null, received ${describeValue(parent)}`, 'write parent: null'));
      if (n !== root && parent !== root) issues.add(src.issueAt(['cameras', i, 'parent'], `parent must be the root "${root}", received ${describeValue(parent)}`, `write parent: ${root}`));
    });
  }
  if (issues.total > before || !parsed.success) return undefined;
  return parsed.data as RigFile;
}

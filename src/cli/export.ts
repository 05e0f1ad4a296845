/**
 * `rigsolve export RIG.yaml --to urdf|json|yaml [--out FILE]`: the rig's
 * transform tree for other software. Written atomically to --out (refuses to
 * overwrite without --force) or printed on stdout.
 */
import type { Command } from 'commander';
import { loadRigFile, toCompactYaml } from '../io/rig-file.js';
import { writeFileAtomic } from '../io/atomic.js';
import { buildTransformTree, transformTreeObject, type BaseMount } from '../export/transforms.js';
import { treeToUrdf } from '../export/urdf.js';
import { loadBasePoseFile, parseBasePoseValues } from '../export/base-pose.js';
import { SAFETY_CAUTION } from '../report/summary.js';
import { OptionsError } from '../errors.js';
import type { CliContext } from './context.js';

const FORMATS = ['urdf', 'json', 'yaml'] as const;

interface ExportOptions {
  to: string;
  out?: string;
  force?: boolean;
  baseFrame?: string;
  basePose?: string;
  basePoseFile?: string;
  basePoseFrame?: string;
  bodyFrames?: boolean;
}

function baseMount(o: ExportOptions): BaseMount | undefined {
  const given = [o.basePose !== undefined, o.basePoseFile !== undefined].filter(Boolean).length;
  if (o.baseFrame === undefined) {
    if (given > 0 || o.basePoseFrame !== undefined) throw new OptionsError('options.base_frame', '--base-pose, --base-pose-file and --base-pose-frame need --base-frame NAME');
    return undefined;
  }
  if (given !== 1) {
    throw new OptionsError('options.base_pose', `--base-frame needs the mount pose of the root camera on the base: give exactly one of --base-pose x,y,z,roll,pitch,yaw and --base-pose-file FILE`);
  }
  if (o.basePoseFrame !== undefined && !['body', 'optical'].includes(o.basePoseFrame)) {
    throw new OptionsError('options.base_pose_frame', `--base-pose-frame must be body or optical, got "${o.basePoseFrame}"`);
  }
  const fromFile = o.basePoseFile !== undefined ? loadBasePoseFile(o.basePoseFile) : undefined;
  const T_base_mount = fromFile ? fromFile.T_base_mount : parseBasePoseValues(o.basePose!);
  const mountFrame = (o.basePoseFrame ?? fromFile?.frame ?? 'body') as 'body' | 'optical';
  return { frame: o.baseFrame, T_base_mount, mountFrame };
}

export function registerExport(program: Command, ctx: CliContext): void {
  program
    .command('export')
    .summary('export the rig as a transform tree (URDF, JSON or YAML)')
    .description(
      'Export the rig\'s transforms: one optical frame per camera (<camera>_optical, child of the root camera\'s), optionally a ' +
        'body-convention frame per camera (<camera>_body: x forward, y left, z up) and a robot base frame above the root camera. ' +
        'urdf: links and fixed joints with <origin xyz rpy>; json/yaml: a flat list of parent/child transforms with translation, ' +
        'quaternion_wxyz, rpy_deg and the 4x4 matrix. The base mount pose places the root camera\'s body-convention frame on the ' +
        'base unless --base-pose-frame optical is given.',
    )
    .argument('<rig>', 'rig file (format: rig-calibration/1)')
    .requiredOption('--to <format>', `output format: ${FORMATS.join(', ')}`)
    .option('--out <file>', 'file to write (atomically); stdout when omitted')
    .option('--force', 'overwrite --out if it exists')
    .option('--base-frame <name>', 'hang the tree under this robot base frame')
    .option('--base-pose <x,y,z,roll,pitch,yaw>', 'mount pose of the root camera on the base (metres, degrees; URDF roll-pitch-yaw)')
    .option('--base-pose-file <file>', 'mount pose from a YAML file: translation [m] and rpy_deg or quaternion_wxyz, optional frame: body|optical')
    .option('--base-pose-frame <frame>', 'which frame of the root camera the mount pose places: body (x forward, y left, z up; default) or optical')
    .option('--body-frames', 'add a body-convention frame (x forward, y left, z up) per camera')
    .action((rigPath: string, o: ExportOptions) => {
      if (!(FORMATS as readonly string[]).includes(o.to)) {
        throw new OptionsError('options.export_format', `unknown --to "${o.to}": choose one of ${FORMATS.join(', ')}`);
      }
      const base = baseMount(o);
      const rig = loadRigFile(rigPath);
      const tree = buildTransformTree(rig, { ...(base ? { base } : {}), bodyFrames: Boolean(o.bodyFrames) });
      let text: string;
      if (o.to === 'urdf') text = treeToUrdf(tree, { caution: SAFETY_CAUTION, source: rigPath });
      else {
        const obj = transformTreeObject(tree, SAFETY_CAUTION, rigPath);
        text = o.to === 'json' ? JSON.stringify(obj, null, 2) + '\n' : toCompactYaml(obj);
      }
      if (o.out) {
        writeFileAtomic(o.out, text, { force: Boolean(o.force) });
        ctx.err(`wrote ${o.out} (${tree.transforms.length} transforms under ${tree.root})`);
      } else ctx.io.stdout(text);
    });
}

/**
 * URDF form of the transform tree: one <link> per frame and one fixed
 * <joint> per transform, with <origin xyz="x y z" rpy="roll pitch yaw"/>
 * (metres, radians; fixed axes X then Y then Z, R = Rz·Ry·Rx, as the URDF
 * standard defines it). Numbers are written in the shortest decimal form that
 * parses back to the same double (ECMAScript Number→String), so the file
 * round-trips; rpy → rotation matrix then agrees to ~1e-16.
 *
 * The output is a whole <robot> document so that it parses on its own; its
 * links and joints can be pasted into a larger robot description.
 */
import { matrixToRpy } from '../geometry/rotation.js';
import type { TransformTree } from './transforms.js';

function num(x: number): string {
  return Object.is(x, -0) ? '0' : String(x);
}

function xmlEscape(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

/** Text of an XML comment: "--" is not allowed inside one. */
function commentText(s: string): string {
  return s.replace(/-{2,}/g, (m) => m.split('').join(' '));
}

export function treeToUrdf(tree: TransformTree, opts: { caution: string; source: string; robotName?: string }): string {
  const lines: string[] = ['<?xml version="1.0"?>'];
  lines.push(`<!-- ${commentText(`Transform tree of rig "${tree.name}" exported by rigsolve from ${opts.source}. Frames: <camera>_optical (z out of the lens, x right, y down), <camera>_body (x forward, y left, z up). Joint origins are T_parent_child in metres and radians.`)} -->`);
  lines.push(`<!-- ${commentText(opts.caution)} -->`);
  lines.push(`<robot name="${xmlEscape(opts.robotName ?? tree.name)}">`);
  const links = [tree.root, ...tree.transforms.map((t) => t.child)];
  for (const l of links) lines.push(`  <link name="${xmlEscape(l)}"/>`);
  for (const tr of tree.transforms) {
    const T = tr.T_parent_child;
    const rpy = matrixToRpy(T.R);
    lines.push(`  <joint name="${xmlEscape(`${tr.parent}_to_${tr.child}`)}" type="fixed">`);
    lines.push(`    <parent link="${xmlEscape(tr.parent)}"/>`);
    lines.push(`    <child link="${xmlEscape(tr.child)}"/>`);
    lines.push(`    <origin xyz="${num(T.t[0]!)} ${num(T.t[1]!)} ${num(T.t[2]!)}" rpy="${num(rpy[0]!)} ${num(rpy[1]!)} ${num(rpy[2]!)}"/>`);
    lines.push('  </joint>');
  }
  lines.push('</robot>');
  return lines.join('\n') + '\n';
}

/**
 * zod validators for the session file (`format: rig-session/1`, formats.md).
 * They check shapes, types and single-field ranges; cross-field rules
 * (references, duplicates, distortion length per model, centre inside the
 * image) live in session.ts. The JSON Schema (schema.ts) is generated from
 * these, so the two never drift apart.
 */
import { z } from 'zod';
import { CAMERA_MODEL_NAMES, type CameraModelName } from '../camera/model.js';

export const SESSION_FORMAT = 'rig-session/1';

/** Allowed characters in camera and target names. */
export const NAME_PATTERN = /^[A-Za-z0-9_.-]+$/;

/**
 * Intrinsic parameter names per model, in storage order (formats.md; the same
 * order as camera/model.ts). Kept here so io/ does not depend on the camera
 * implementations.
 */
export const MODEL_PARAM_NAMES: Readonly<Record<CameraModelName, readonly string[]>> = {
  pinhole: ['fx', 'fy', 'cx', 'cy'],
  'brown-conrady': ['fx', 'fy', 'cx', 'cy', 'k1', 'k2', 'p1', 'p2', 'k3'],
  'kannala-brandt': ['fx', 'fy', 'cx', 'cy', 'k1', 'k2', 'k3', 'k4'],
};

const nameSchema = z
  .string()
  .regex(NAME_PATTERN)
  .meta({ description: 'Letters, digits, "_", "." and "-" only; unique within its list.' });

const finitePair = (desc: string, positive: boolean) =>
  z.tuple(positive ? [z.number().positive(), z.number().positive()] : [z.number(), z.number()]).meta({ description: desc });

export const cameraSchema = z.strictObject({
  name: nameSchema,
  resolution: z
    .tuple([z.int().positive(), z.int().positive()])
    .meta({ description: '[width, height] in pixels.' }),
  model: z.enum(CAMERA_MODEL_NAMES as [CameraModelName, ...CameraModelName[]]),
  focal: finitePair('[fx, fy] in pixels. May be omitted only with solve_intrinsics: true.', true).optional(),
  center: finitePair('[cx, cy] in pixels, inside the image. May be omitted only with solve_intrinsics: true.', false).optional(),
  distortion: z
    .array(z.number())
    .meta({ description: "The model's distortion coefficients: brown-conrady k1 k2 p1 p2 k3; kannala-brandt k1 k2 k3 k4; pinhole none." })
    .optional(),
  solve_intrinsics: z.boolean().meta({ description: 'Refine focal/center/distortion jointly (default false).' }).optional(),
  fixed_intrinsics: z
    .array(z.string())
    .meta({ description: "Intrinsic parameter names held fixed when solving intrinsics, e.g. [k3, p1, p2]." })
    .optional(),
  pixel_sigma: z
    .number()
    .positive()
    .meta({ description: 'Prior detection noise, px, 1-sigma per image axis (default 1).' })
    .optional(),
});

/**
 * Most inner corners a checkerboard may have (columns × rows). Far beyond any printed board; it keeps a typo
 * (an extra digit) or a corrupted file from allocating gigabytes for the board's point table.
 */
export const MAX_CHECKERBOARD_CORNERS = 1_000_000;

export const checkerboardTargetSchema = z.strictObject({
  name: nameSchema,
  kind: z.literal('checkerboard'),
  inner_corners: z
    .tuple([z.int().min(2), z.int().min(2)])
    .refine(([c, r]) => c * r <= MAX_CHECKERBOARD_CORNERS, {
      message: `columns × rows must be at most ${MAX_CHECKERBOARD_CORNERS.toLocaleString('en-US')} inner corners`,
    })
    .meta({ description: `[columns, rows] of inner corners (columns × rows ≤ ${MAX_CHECKERBOARD_CORNERS}); point id = row*columns + column at (column*square, row*square, 0).` }),
  square: z.number().positive().meta({ description: 'Square size, metres.' }),
});

export const pointsTargetSchema = z.strictObject({
  name: nameSchema,
  kind: z.literal('points'),
  points: z
    .array(z.tuple([z.number(), z.number(), z.number()]))
    .min(4)
    .meta({ description: 'Point coordinates [x, y, z] in metres in the target frame; point id = index.' }),
});

export const targetSchema = z.discriminatedUnion('kind', [checkerboardTargetSchema, pointsTargetSchema]);

export const sessionSchema = z
  .strictObject({
    format: z.literal(SESSION_FORMAT),
    name: z.string().meta({ description: 'Free text (defaults to the file name).' }).optional(),
    reference_camera: nameSchema.meta({ description: 'The rig root; its pose is the identity. Must name a camera.' }),
    cameras: z.array(cameraSchema).min(1),
    targets: z.array(targetSchema).min(1),
    scene: z.enum(['moving_targets', 'fixed_targets']).optional(),
    detections: z
      .string()
      .min(1)
      .meta({ description: 'Detections CSV, relative to the session file; or an image pattern with {camera} and {frame} placeholders (e.g. photos/{camera}/{frame}.png), detected by solve.' }),
  })
  .meta({ title: 'rigsolve session (rig-session/1)' });

export type SessionInput = z.infer<typeof sessionSchema>;
export type CameraInput = z.infer<typeof cameraSchema>;
export type TargetInput = z.infer<typeof targetSchema>;

export const SESSION_KEYS = Object.keys(sessionSchema.shape);
export const CAMERA_KEYS = Object.keys(cameraSchema.shape);
export const TARGET_KEYS = [...new Set([...Object.keys(checkerboardTargetSchema.shape), ...Object.keys(pointsTargetSchema.shape)])];

/** Next steps for schema issues, by field name. */
export const SESSION_FIELD_HELP: Record<string, string> = {
  format: `write format: ${SESSION_FORMAT} as the first line`,
  name: 'a free-text name, e.g. name: front-rig',
  reference_camera: 'name the camera that defines the rig frame, e.g. reference_camera: front_center',
  cameras: 'list at least one camera under cameras:',
  targets: 'list at least one target under targets:',
  scene: 'use scene: moving_targets (rig still, targets move) or scene: fixed_targets (rig moves)',
  detections: 'give the detections CSV path (or an image pattern such as photos/{camera}/{frame}.png), relative to the session file',
  resolution: 'write resolution: [width, height] in pixels, positive integers',
  model: `use one of ${CAMERA_MODEL_NAMES.join(', ')}`,
  focal: 'write focal: [fx, fy] in pixels, both > 0',
  center: 'write center: [cx, cy] in pixels, inside the image',
  distortion: "write the model's distortion coefficients as a list of numbers",
  solve_intrinsics: 'write solve_intrinsics: true or false',
  fixed_intrinsics: 'list intrinsic parameter names, e.g. fixed_intrinsics: [k3]',
  pixel_sigma: 'write the detection noise in pixels, > 0, e.g. pixel_sigma: 0.5',
  kind: 'use kind: checkerboard or kind: points',
  inner_corners: `write inner_corners: [columns, rows], integers >= 2 (inner corners, not squares), at most ${MAX_CHECKERBOARD_CORNERS.toLocaleString('en-US')} in all`,
  square: 'write the square size in metres, > 0, e.g. square: 0.06',
  points: 'list at least 4 points as [x, y, z] in metres, e.g. points: [[0, 0, 0], [0.5, 0, 0], ...]',
};

export function sessionKnownKeys(path: readonly PropertyKey[]): readonly string[] {
  if (path.length === 0) return SESSION_KEYS;
  if (path[0] === 'cameras') return CAMERA_KEYS;
  if (path[0] === 'targets') return TARGET_KEYS;
  return [];
}

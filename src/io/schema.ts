/**
 * JSON Schemas of the file formats, generated from the zod validators that
 * the loaders use, so the published schema and the checks never drift apart.
 * Cross-field rules (references between entries, distortion length per
 * model, centre inside the image) are checked by the loaders only.
 */
import { z } from 'zod';
import { sessionSchema } from './session-schema.js';
import { rigFileSchema } from './rig-file.js';

/** JSON Schema (draft 2020-12) of the session file, rig-session/1. */
export function sessionJsonSchema(): Record<string, unknown> {
  return z.toJSONSchema(sessionSchema, { target: 'draft-2020-12', io: 'input' }) as Record<string, unknown>;
}

/** JSON Schema (draft 2020-12) of the rig file, rig-calibration/1. */
export function rigFileJsonSchema(): Record<string, unknown> {
  return z.toJSONSchema(rigFileSchema, { target: 'draft-2020-12', io: 'input' }) as Record<string, unknown>;
}

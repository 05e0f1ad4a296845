import { describe, expect, test } from 'vitest';
import { CAMERA_MODEL_NAMES } from '../camera/model.js';
import { rigFileJsonSchema, sessionJsonSchema } from './schema.js';

type Json = Record<string, unknown>;

describe('JSON Schemas generated from the validators', () => {
  test('session schema names every formats.md field and requires the mandatory ones', () => {
    const s = sessionJsonSchema() as Json;
    expect(s.$schema).toBe('https://json-schema.org/draft/2020-12/schema');
    const props = s.properties as Json;
    expect(Object.keys(props).sort()).toEqual(['cameras', 'detections', 'format', 'name', 'reference_camera', 'scene', 'targets']);
    expect(s.required).toEqual(expect.arrayContaining(['format', 'reference_camera', 'cameras', 'targets', 'detections']));
    expect(s.additionalProperties).toBe(false);
    const cam = (props.cameras as Json).items as Json;
    expect(Object.keys(cam.properties as Json)).toEqual(
      expect.arrayContaining(['name', 'resolution', 'model', 'focal', 'center', 'distortion', 'solve_intrinsics', 'pixel_sigma', 'fixed_intrinsics']),
    );
    expect(((cam.properties as Json).model as Json).enum).toEqual([...CAMERA_MODEL_NAMES]);
    const targets = (props.targets as Json).items as Json;
    expect(JSON.stringify(targets)).toContain('"checkerboard"');
    expect(JSON.stringify(targets)).toContain('"inner_corners"');
  });

  test('rig schema lists the rig-calibration/1 camera fields', () => {
    const s = rigFileJsonSchema() as Json;
    const cam = ((s.properties as Json).cameras as Json).items as Json;
    expect((cam.required as string[]).sort()).toEqual(
      [
        'name', 'parent', 'translation', 'quaternion_wxyz', 'rpy_deg', 'sigma_translation_mm', 'sigma_rotation_deg', 'covariance',
        'model', 'resolution', 'focal', 'center', 'distortion', 'rms_px', 'detections_used', 'detections_rejected',
      ].sort(),
    );
  });
});

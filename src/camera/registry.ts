/**
 * Camera models by name (the `model:` field of formats.md) and their
 * parameter layouts.
 */
import { brownConrady } from './brown-conrady.js';
import { kannalaBrandt } from './kannala-brandt.js';
import { CAMERA_MODEL_NAMES, type CameraModel, type CameraModelName } from './model.js';
import { pinhole } from './pinhole.js';

const MODELS: Readonly<Record<CameraModelName, CameraModel>> = Object.freeze({
  pinhole,
  'brown-conrady': brownConrady,
  'kannala-brandt': kannalaBrandt,
});

/** True when `name` is one of the model names of formats.md. */
export function isCameraModelName(name: string): name is CameraModelName {
  return (CAMERA_MODEL_NAMES as readonly string[]).includes(name);
}

/**
 * The model object for a formats.md model name. Throws a RangeError naming
 * the known models for any other string (input validation should have
 * rejected it with a user-facing issue before this point).
 */
export function cameraModel(name: CameraModelName | string): CameraModel {
  if (!isCameraModelName(name)) {
    throw new RangeError(`unknown camera model "${name}"; expected one of ${CAMERA_MODEL_NAMES.join(', ')}`);
  }
  return MODELS[name];
}

/** Number of intrinsic parameters: 4 (fx fy cx cy) + distortion coefficients. */
export function paramCount(name: CameraModelName | string): number {
  return cameraModel(name).numParams;
}

/** Number of distortion coefficients (the `distortion:` list length in formats.md). */
export function distortionCount(name: CameraModelName | string): number {
  return cameraModel(name).numDistortion;
}

/** Parameter names in storage order, e.g. ['fx', 'fy', 'cx', 'cy', 'k1', ...]. */
export function paramNames(name: CameraModelName | string): readonly string[] {
  return cameraModel(name).paramNames;
}

/** Distortion coefficient names in storage order (paramNames without fx fy cx cy). */
export function distortionNames(name: CameraModelName | string): readonly string[] {
  return cameraModel(name).paramNames.slice(4);
}

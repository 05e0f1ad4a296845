export * from './errors.js';
export * from './linalg/index.js';
export * from './geometry/index.js';
export type { CameraModel, CameraModelName } from './camera/model.js';

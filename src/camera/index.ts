export * from './model.js';
export * from './registry.js';
export { MIN_DEPTH_M } from './limits.js';
export { pinhole, PINHOLE_PARAM_NAMES } from './pinhole.js';
export { brownConrady, BROWN_CONRADY_PARAM_NAMES, brownConradyMaxRadiusSquared, brownConradyUndistort } from './brown-conrady.js';
export {
  kannalaBrandt,
  KANNALA_BRANDT_PARAM_NAMES,
  kannalaBrandtMaxTheta,
  kannalaBrandtThetaD,
  kannalaBrandtSolveTheta,
} from './kannala-brandt.js';

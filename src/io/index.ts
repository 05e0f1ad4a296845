export type * from './types.js';
export { loadSession, loadSessionCollect, isImagePattern, emptyDetectionTable, buildTarget, type SessionLoadOptions, DEFAULT_FOCAL_PER_WIDTH, type CameraSpecWithProvenance } from './session.js';
export {
  loadDetections,
  loadDetectionsCollect,
  parseDetections,
  REQUIRED_COLUMNS,
  OPTIONAL_COLUMNS,
  MAX_DETECTIONS_BYTES,
  type DetectionContext,
  type LoadedDetections,
  type SessionLocation,
} from './detections.js';
export { writeRigFile, loadRigFile, loadRigFileCollect, rigFileToYaml, RIG_FORMAT } from './rig-file.js';
export { writeFileAtomic, type WriteOptions } from './atomic.js';
export { sessionJsonSchema, rigFileJsonSchema } from './schema.js';
export { SESSION_FORMAT, MODEL_PARAM_NAMES, NAME_PATTERN } from './session-schema.js';
export { IssueCollector, MAX_STORED_ISSUES } from './issues.js';
export { MAX_INPUT_BYTES, MAX_ALIAS_COUNT } from './yaml-source.js';

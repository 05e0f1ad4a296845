/** Public surface of checkerboard detection (see checkerboard.ts for the method and the id rules). */
export { decodeImage, readGreyImage, encodePng, encodeJpeg, rgbaToGrey, sniffImageFormat } from './image.js';
export type { GreyImage, ImageFormat } from './image.js';
export { detectCheckerboard, refineCorner, chessResponse, gaussianBlur, binomialBlur5 } from './checkerboard.js';
export type {
  BoardSize,
  CheckerboardOptions,
  CheckerboardResult,
  CheckerboardFound,
  CheckerboardNotFound,
  CheckerboardFailureReason,
  CheckerboardAmbiguity,
} from './checkerboard.js';
export { runDetectJob } from './job.js';
export type { DetectJob, DetectJobResult } from './job.js';
export { detectFiles, plannedWorkerCount, workersAvailable } from './workers.js';
export type { DetectFilesOptions } from './workers.js';
export {
  detectSession,
  planSessionDetection,
  checkImagePattern,
  listPatternFiles,
  compareFrameIds,
  detectionsCsv,
  sessionWithDetections,
  detectionReportLines,
  notFoundAdviceLines,
  NOT_FOUND_ADVICE,
  PATTERN_PLACEHOLDERS,
} from './session-detect.js';
export type { SessionDetection, SessionDetectOptions, CameraDetectionReport, DetectedView, NotFoundReason, PatternMatch } from './session-detect.js';

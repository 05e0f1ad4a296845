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
export { renderExamplePhotos } from './render-examples.js';
export type { ExampleCamera, ExampleFrame, ExamplePhotosSpec, ExamplePhoto } from './render-examples.js';

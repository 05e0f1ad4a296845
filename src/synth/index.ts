/** Public surface of synthetic photos: the board renderer, pose sampling and example photo sets (ground truth known exactly). */
export { renderBoard, projectBoardPoint, distortNormalised, undistortNormalised, encodePng } from './render-board.js';
export type { RenderCamera, RenderBoard, RenderOptions, RenderResult } from './render-board.js';
export { sampleVisibleBoard, boardInView } from './board-poses.js';
export type { PoseSampling } from './board-poses.js';
export { renderExamplePhotos } from './render-examples.js';
export type { ExampleCamera, ExampleFrame, ExamplePhotosSpec, ExamplePhoto } from './render-examples.js';

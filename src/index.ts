export * from './errors.js';
export * from './linalg/index.js';
export * from './geometry/index.js';
export * from './camera/index.js';

export * from './so3.js';
export * from './se3.js';
export * from './rotation.js';
export * from './averaging.js';

export * from './so3.js';
export * from './se3.js';
export * from "./pose-manifold.js";

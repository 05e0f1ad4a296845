export * from './small.js';

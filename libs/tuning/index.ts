export * from './grid.js';
export * from './apply.js';
export * from './recommend.js';

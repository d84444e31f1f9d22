export * from './grid.js';
export * from './apply.js';
export * from './recommend.js';
export * from './columns.js';
export * from './evaluate.js';

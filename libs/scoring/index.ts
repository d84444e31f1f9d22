export * from './labels.js';
export * from './score.js';

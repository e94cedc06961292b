export * from './common.js';
export * from './delay.js';
export * from './solar.js';
export * from './dm-fit.js';
export * from './dm-series.js';
export * from './scatter-fit.js';

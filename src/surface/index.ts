export * from './grid.js';
export * from './mesh.js';
export * from './grid3.js';

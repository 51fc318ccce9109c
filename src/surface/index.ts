export * from './grid.js';
export * from './mesh.js';

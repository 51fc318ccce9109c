/**
 * sill's report palette (our own). Every text colour is checked against its background with the
 * WCAG 2.x contrast ratio in tests/render/contrast.test.ts; change a colour there and here together.
 */
import type { RampName } from './colour.js';

export const THEME = {
  page: '#f6f5f1',
  panel: '#ffffff',
  text: '#1b2430',
  muted: '#4f5a67',
  link: '#0b5a8c',
  border: '#d6d2c8',
  headBg: '#e9e6de',
  selRowBg: '#fbe3ec',
  select: '#c0135a',
  tipBg: '#1b2430',
  tipText: '#f6f5f1',
  cautionBg: '#fff3d1',
  cautionText: '#563800',
  cautionBorder: '#d9a630',
  okText: '#1e5e2a',
  failText: '#9b1c1c',
  /** Marker fills (shape tells the kind; colour only helps). */
  pit: '#3f7fe0',
  pass: '#f2b01e',
  peak: '#d7301f',
  pour: '#0f8a95',
  outside: '#5b6470',
  markerStroke: '#111111',
  halo: '#ffffff',
  contour: '#1b2430',
  outline: '#0b3d66',
  path: '#ffffff',
  pathCasing: '#1b2430',
  nodata: '#c9c6bf',
} as const;

/** Colour ramps by use: elevation (alone), elevation under a water layer, energy, water depth. */
export const RAMPS: Record<'terrain' | 'terrainUnderWater' | 'energy' | 'depth', { name: RampName; lo: number; hi: number }> = {
  terrain: { name: 'cividis', lo: 0.12, hi: 1 },
  terrainUnderWater: { name: 'greys', lo: 0.45, hi: 0.05 },
  energy: { name: 'viridis', lo: 0, hi: 1 },
  depth: { name: 'viridis', lo: 0.92, hi: 0.18 },
};

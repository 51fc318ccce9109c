/** Pieces every report shares: the surface description, locations, the Euler block. */
import type { Grid, Crs } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import type { SurveyResult } from '../morse/survey.js';
import { SelfCheckError } from '../errors.js';

export const SILL_VERSION = '0.1.0';

export interface SurfaceInfo {
  kind: 'grid' | 'mesh';
  width: number | null;
  height: number | null;
  points: number;
  validCells: number;
  crs: { epsg: number | null; name: string | null; geographic: boolean } | null;
  cellSize: [number, number] | null;
  transform: number[] | null;
}

export function surfaceInfo(s: Grid | Mesh): SurfaceInfo {
  const crs = (c: Crs | null) => (c ? { epsg: c.epsg ?? null, name: c.name ?? (c.epsg ? `EPSG:${c.epsg}` : null), geographic: !!c.geographic } : null);
  if (s.kind === 'grid') {
    return {
      kind: 'grid', width: s.width, height: s.height, points: s.size, validCells: s.validCount(),
      crs: crs(s.crs), cellSize: s.cellSize(), transform: [...s.transform],
    };
  }
  return { kind: 'mesh', width: null, height: null, points: s.size, validCells: s.size, crs: crs(s.crs), cellSize: null, transform: null };
}

export interface Location {
  /** Vertex index (row-major cell index on grids). */
  index: number;
  col: number | null;
  row: number | null;
  x: number;
  y: number;
}

export function locate(s: Grid | Mesh, i: number): Location {
  if (s.kind === 'grid') {
    const row = Math.floor(i / s.width), col = i - row * s.width;
    return { index: i, col, row, x: s.x(col, row), y: s.y(col, row) };
  }
  return { index: i, col: null, row: null, x: s.x[i], y: s.y[i] };
}

export interface EulerInfo {
  characteristic: number;
  pits: number;
  passes: number;
  peaks: number;
  holds: boolean;
  /** The outside vertex is counted among the pits (open boundary). */
  outsidePit: boolean;
  simplices: number[];
}

export function eulerInfo(r: SurveyResult): EulerInfo {
  return { ...r.euler, outsidePit: r.critical.outsidePit, simplices: r.simplices.byDimension };
}

/** A JSON-safe number: non-finite values become null. */
export function num(x: number): number | null {
  return Number.isFinite(x) ? x : null;
}

/** Called with the number of features (critical points, depressions) once the analysis has counted them, before their records are built: the command line checks its memory budget there. */
export interface FeatureHook {
  onFeatures?: (features: number) => void;
}

/** The Euler relation failed: the figures for the one-line message. */
export function eulerFailure(e: EulerInfo): SelfCheckError {
  return new SelfCheckError('the Euler relation does not hold', `χ = ${e.characteristic} by counting simplices, pits − passes + peaks = ${e.pits - e.passes + e.peaks}`);
}

/** Largest relative water-balance error a run may report: |input − ponded − outflow| / input. */
export const BALANCE_TOLERANCE = 1e-9;

/** Refuse a runoff result whose water does not balance. */
export function checkBalance(w: { input: number; ponded: number; outflow: number; balanceError: number }): void {
  if (!(w.balanceError <= BALANCE_TOLERANCE)) {
    throw new SelfCheckError(
      `the water balance is off by ${w.balanceError.toExponential(2)} relative, more than ${BALANCE_TOLERANCE}`,
      `input ${w.input.toPrecision(10)}, ponded ${w.ponded.toPrecision(10)}, outflow ${w.outflow.toPrecision(10)}`,
      'if the runoff depth is tiny next to the elevations, subtract a base elevation from the DEM; otherwise this is a bug in sill, please report it with the input',
    );
  }
}

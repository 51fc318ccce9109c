/** Types of bench/lib/metropolis.mjs. */
export interface ChainOptions {
  /** Potential in units of kT. */
  energy: (x: number, y: number) => number;
  box: { x: [number, number]; y: [number, number] };
  start: [number, number];
  /** Frames kept, every `thin`-th step. */
  frames: number;
  thin: number;
  /** Standard deviation of a trial step (each axis). */
  step: number;
  seed: number;
  /** Optional: a third field per frame, g(x, y) (e.g. a log-weight). */
  extra?: (x: number, y: number) => number;
}
/** Frames (x, y[, extra]) as one flat Float64Array, frame-major, and the acceptance rate. */
export function metropolis(o: ChainOptions): { data: Float64Array; fields: number; acceptance: number };

/** Inputs for the batch tests: analytic surfaces as float64 .npy files, and helpers to read a batch folder. */
import { readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';

/** A float64 .npy grid (h rows × w columns) with values f(col, row). */
export function writeNpy(path: string, w: number, h: number, f: (c: number, r: number) => number): void {
  const v = new Float64Array(w * h);
  for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) v[r * w + c] = f(c, r);
  const header = `{'descr': '<f8', 'fortran_order': False, 'shape': (${h}, ${w}), }`.padEnd(117) + '\n';
  writeFileSync(path, Buffer.concat([Buffer.from([0x93]), Buffer.from('NUMPY'), Buffer.from([1, 0, header.length & 255, header.length >> 8]), Buffer.from(header), Buffer.from(v.buffer)]));
}

/** sin(2πc/N)·sin(2πr/N) on an N × N grid: on a torus 2 pits, 4 passes, 2 peaks and χ = 0 (analytic; see tests/morse/analytic.test.ts). */
export function writeTorus(path: string, N = 32, phase = 0): void {
  writeNpy(path, N, N, (c, r) => Math.sin((2 * Math.PI * (c + phase)) / N) * Math.sin((2 * Math.PI * r) / N));
}

/** Paraboloid bowl z = H·(ρ/R)² inside radius R, a plateau at H outside, on an N × N grid of unit cells (R = 0.4 N). */
export const BOWL_H = 5;
export function writeBowl(path: string, N = 100): { R: number; volume: number } {
  const L = N / 2, R = L / 1.25;
  writeNpy(path, N, N, (c, r) => {
    const q = Math.hypot(-L + c + 0.5, L - r - 0.5) / R;
    return q >= 1 ? BOWL_H : BOWL_H * q * q;
  });
  // Archimedes: a paraboloid cut at its rim height holds half its circumscribed cylinder, πR²H/2
  return { R, volume: (Math.PI * R * R * BOWL_H) / 2 };
}

/** A file that starts like a GeoTIFF and ends early: each run on it fails with one line naming it. */
export function writeDamaged(path: string): void {
  const b = Buffer.alloc(64);
  b.write('II', 0, 'latin1');
  b.writeUInt16LE(42, 2);
  b.writeUInt32LE(4000, 4); // first image directory beyond the end of the file
  writeFileSync(path, b);
}

export interface Row { input: string; folder: string; status: string; error: string | null; seconds: number | null; [k: string]: unknown }
export interface CatalogueFile { command: string; inputs: number; ok: number; failed: number; rows: Row[] }

export const readCatalogue = (dir: string): CatalogueFile => JSON.parse(readFileSync(join(dir, 'catalogue.json'), 'utf8'));

/** The CSV catalogue without its last column (seconds), which differs from run to run. */
export function csvWithoutSeconds(dir: string): string {
  return readFileSync(join(dir, 'catalogue.csv'), 'utf8').split('\n').map((l) => l.replace(/,[^,]*$/, '')).join('\n');
}

/** The JSON catalogue without the seconds of each row. */
export function jsonWithoutSeconds(dir: string): string {
  return readFileSync(join(dir, 'catalogue.json'), 'utf8').replace(/,"seconds":[^,}]*/g, '');
}

/** Names in a folder that are staging folders or temporaries left behind. */
export function leftovers(dir: string): string[] {
  return readdirSync(dir).filter((n) => n.startsWith('.sill-staging-') || n.endsWith('.tmp'));
}

/** The run id of a finished input folder (its manifest), to tell whether a rerun redid it. */
export function manifestRun(dir: string): string {
  return (JSON.parse(readFileSync(join(dir, '.sill-manifest.json'), 'utf8')) as { run: string }).run;
}
